/* src/cli/demo_reports.c - the demo's filed reports: first prototype's sweep, the inspected lot, the part's history */
#include <stdio.h>
#include <string.h>

#include "../io/io.h"
#include "cli.h"
#include "demo.h"
#include "../report/report.h"

typedef enum demo_page { PAGE_SWEEP, PAGE_LOT, PAGE_PART } demo_page;

static int write_page(hb_db *db, demo_page page, int64_t sweep_id, const hb_db_part *part, const char *lot_code,
		      const char *path)
{
	char err[300] = "";
	hb_report_request rq = { .kind = page == PAGE_SWEEP ? HB_REPORT_SWEEP : page == PAGE_LOT ? HB_REPORT_LOT :
											       HB_REPORT_PART,
				 .sweep_id = sweep_id, .part_number = part->part_number, .lot_code = lot_code,
				 .path = path };
	/* filed like any report: numbered, hashed, recorded in the demo's store */
	int rc = hb_report_file(db, &rq, NULL, err, sizeof err);
	if (rc != HB_OK)
		hb_cli_error("report %s: %s", path, err[0] ? err : hb_status_name(rc));
	return rc;
}

int hb_demo_reports(hb_db *db, const hb_db_part *part, int64_t lot_id, const char *lot_code, const char *out_dir)
{
	(void)lot_id;
	/* The first prototype is the oldest complete bias sweep of the part. */
	hb_db_sweep_filter f;
	hb_db_sweep_filter_init(&f);
	f.part_number = part->part_number;
	f.kind = HB_DB_SWEEP_BIAS;
	f.status = HB_DB_COMPLETE;
	hb_db_sweep *list = NULL;
	size_t n = 0;
	if (hb_db_sweep_list(db, &f, &list, &n) != HB_OK) {
		hb_cli_error("store: %s", hb_db_errmsg(db));
		return HB_ERR_DB;
	}
	int64_t first = n > 0 ? list[n - 1].id : 0;
	hb_db_sweeps_free(list);

	char sweep_path[1100], lot_path[1100], part_path[1100];
	snprintf(sweep_path, sizeof sweep_path, "%s/report.html", out_dir);
	snprintf(lot_path, sizeof lot_path, "%s/lot-report.html", out_dir);
	snprintf(part_path, sizeof part_path, "%s/part-report.html", out_dir);
	int rc = first > 0 ? write_page(db, PAGE_SWEEP, first, part, lot_code, sweep_path) : HB_OK;
	if (rc == HB_OK)
		rc = write_page(db, PAGE_LOT, 0, part, lot_code, lot_path);
	if (rc == HB_OK)
		rc = write_page(db, PAGE_PART, 0, part, lot_code, part_path);
	if (rc != HB_OK)
		return rc;
	printf("reports (self-contained HTML, print to PDF from any browser):\n");
	if (first > 0)
		printf("  %-44s %s\n", "sweep of the first prototype:", sweep_path);
	printf("  lot %-40s %s\n", lot_code, lot_path);
	printf("  %-44s %s\n\n", "every unit of the part and its trend:", part_path);
	return HB_OK;
}
