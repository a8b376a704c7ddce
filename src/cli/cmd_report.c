/* src/cli/cmd_report.c - command `report`: a filed HTML record of one sweep, one lot or one part */
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "../../db/hb_db.h"
#include "../io/io.h"
#include "cli.h"
#include "../report/report.h"

typedef struct report_args {
	const char *lot, *part, *out_path;
} report_args;

static const hb_opt report_table[] = {
	{ .name = "lot", .kind = HB_OPT_TEXT, .arg = "LOT", .off = offsetof(report_args, lot),
	  .help = "lot code (add --part when several parts use the code)" },
	{ .name = "part", .kind = HB_OPT_TEXT, .arg = "P", .off = offsetof(report_args, part), .help = "part number" },
	{ .name = "out", .kind = HB_OPT_PATH, .arg = "FILE", .off = offsetof(report_args, out_path),
	  .help = "the page to write ('-' = standard output)" },
	{ .name = NULL },
};

const hb_cmd_opts hb_opts_report = {
	.name = "report",
	.usage = "SWEEP_ID --out FILE.html\n"
		 "       henrybench report --lot LOT [--part P] --out FILE.html\n"
		 "       henrybench report --part P --out FILE.html",
	.about = "\nWrites one self-contained HTML page (figures inline, nothing fetched) that prints\n"
		 "as an engineering record: a sweep with its settings, instruments, verdicts, fit\n"
		 "values and plots; an inspected lot with its plan, units, decision and statistics;\n"
		 "or a part's history with per-lot statistics and the L0 trend. SWEEP_ID, LOT and P\n"
		 "may also be the record's global identity. Every page is filed: it gets a report\n"
		 "number, and the store keeps the SHA-256 of the page and of the points it rests on\n"
		 "('henrybench verify FILE.html' checks both).\n",
	.opts = report_table,
	.max_operands = -1,
};

int hb_cmd_report(int argc, char **argv)
{
	report_args a = { NULL, NULL, NULL };
	hb_opts_result r;
	if (hb_opts_parse(&hb_opts_report, argc, argv, &a, &r) != HB_OK)
		return HB_EXIT_USAGE;
	if (r.done)
		return HB_EXIT_OK;
	const char *lot = a.lot, *part = a.part, *out_path = a.out_path;
	int first = r.first;
	long long sweep_id = 0;
	if (first < argc) {
		if (lot || part || first + 1 < argc) {
			hb_cli_error("report: give one SWEEP_ID, or --lot / --part, not both");
			return HB_EXIT_USAGE;
		}
		if (hb_cli_parse_sweep_id(argv[first], &sweep_id) != HB_OK)
			return HB_EXIT_USAGE;
	} else if (!lot && !part) {
		hb_cli_error("report needs a SWEEP_ID, --lot LOT or --part P (try 'henrybench report --help')");
		return HB_EXIT_USAGE;
	}
	if (!out_path || !*out_path) {
		hb_cli_error("report needs --out FILE.html ('-' for standard output)");
		return HB_EXIT_USAGE;
	}

	int open_exit = HB_EXIT_RUNTIME;
	hb_db *db = hb_cli_open_store_read(&open_exit);
	if (!db)
		return open_exit;
	/* A report is filed with its number and hashes (verify reads them back):
	 * a page that could not be filed would carry a number that leads nowhere,
	 * so on a read-only store none is written (docs/store.md). */
	if (hb_db_is_readonly(db)) {
		hb_cli_error("report: store %s is read-only, so the report could not be filed; nothing was written "
			     "(copy the store to a writable place and report from there)", hb_db_path(db));
		hb_db_close(db);
		return HB_EXIT_RUNTIME;
	}
	char part_buf[HB_DB_ID_LEN], lot_buf[HB_DB_ID_LEN], lot_part[HB_DB_ID_LEN];
	if (lot)
		lot = hb_cli_lot_code(lot, lot_buf, sizeof lot_buf, lot_part, sizeof lot_part, &part);
	hb_report_request rq = { .kind = sweep_id > 0 ? HB_REPORT_SWEEP : lot ? HB_REPORT_LOT : HB_REPORT_PART,
				 .sweep_id = (int64_t)sweep_id,
				 .part_number = part ? hb_cli_part_number(part, part_buf, sizeof part_buf) : NULL,
				 .lot_code = lot, .path = out_path };
	char err[300] = "", number[HB_DB_UID_LEN] = "";
	/* written beside the target and renamed, hashed and filed in the store (report_file.c) */
	int rc = hb_report_file(db, &rq, number, err, sizeof err);
	hb_db_close(db);
	bool to_stdout = strcmp(out_path, "-") == 0;
	if (rc != HB_OK) {
		hb_cli_error("report: %s", err[0] ? err : hb_status_name(rc));
		return rc == HB_ERR_ARG || rc == HB_ERR_NOTFOUND ? HB_EXIT_USAGE : HB_EXIT_RUNTIME;
	}
	if (!to_stdout)
		printf("report %s written: %s\n", number, out_path);
	return HB_EXIT_OK;
}
