/* src/cli/cmd_verify.c - command `verify`: recompute a filed report's two SHA-256 hashes and compare them with the store's record */
#include <stddef.h>
#include <stdio.h>
#include <string.h>
#include <unistd.h>

#include "../../db/hb_db.h"
#include "cli.h"
#include "../report/report.h"

typedef struct verify_args {
	int unused;
} verify_args;

static const hb_opt verify_table[] = {
	{ .name = NULL },
};

const hb_cmd_opts hb_opts_verify = {
	.name = "verify",
	.usage = "REPORT.html",
	.about = "\nReads the report number from the page's head, finds the report in the store\n"
		 "(--db), and recomputes the SHA-256 of the file and of the canonical export of\n"
		 "the stored points the report rests on (docs/store.md). Exit 0 when both match\n"
		 "what was filed, 1 when either does not (or the report is unknown), 2 for usage.\n",
	.opts = verify_table,
	.max_operands = -1,
};

int hb_cmd_verify(int argc, char **argv)
{
	verify_args a = { 0 };
	hb_opts_result r;
	if (hb_opts_parse(&hb_opts_verify, argc, argv, &a, &r) != HB_OK)
		return HB_EXIT_USAGE;
	if (r.done)
		return HB_EXIT_OK;
	if (r.first != argc - 1) {
		hb_cli_error("verify needs one REPORT.html (try 'henrybench verify --help')");
		return HB_EXIT_USAGE;
	}
	const char *path = argv[r.first];
	char err[400] = "", number[HB_DB_UID_LEN];
	/* a file that is not a filed report is the caller's mistake, found before the store is opened */
	int rc = hb_report_read_number(path, number, err, sizeof err);
	if (rc != HB_OK) {
		hb_cli_error("verify: %s", err);
		return HB_EXIT_RUNTIME;
	}
	/* No --db (nor HENRYBENCH_DB): a store bench.db beside the report is the one it
	 * was filed in (the demo's layout); otherwise the default store. */
	char beside[4200];
	if (!hb_global.db_path) {
		const char *slash = strrchr(path, '/');
		snprintf(beside, sizeof beside, "%.*s%sbench.db", slash ? (int)(slash - path) : 0, path, slash ? "/" : "");
		if (access(beside, R_OK) == 0) {
			hb_global.db_path = beside;
			printf("store: %s (beside the report; no --db given)\n", beside);
		}
	}
	int open_exit = HB_EXIT_RUNTIME;
	hb_db *db = hb_cli_open_store_read(&open_exit);
	if (!db)
		return open_exit;
	hb_report_check c;
	rc = hb_report_verify(db, path, &c, err, sizeof err);
	hb_db_close(db);
	if (rc != HB_OK) {
		hb_cli_error("verify: %s", err[0] ? err : hb_status_name(rc));
		hb_report_check_clear(&c);
		return HB_EXIT_RUNTIME;
	}
	printf("report %s: %s report of %s, filed %s by henrybench %s\n", c.number, c.filed.kind, c.filed.subject,
	       c.filed.created, c.filed.software_version);
	printf("  filed as  %s\n", c.filed.path);
	if (!c.filed.file_sha256[0])
		printf("  file      NOT VERIFIABLE: written to standard output, no file hash stored\n");
	else if (c.file_intact)
		printf("  file      intact   sha256 %s\n", c.file_sha256);
	else
		printf("  file      ALTERED  sha256 %s (filed %s)\n", c.file_sha256, c.filed.file_sha256);
	printf("  data      %s  sha256 %s over %zu points of %zu sweep(s)%s%s%s\n",
	       c.data_intact ? "intact " : "ALTERED", c.data_sha256, c.n_points, c.filed.n_sweeps,
	       c.data_intact ? "" : " (filed ", c.data_intact ? "" : c.filed.data_sha256, c.data_intact ? "" : ")");
	int exit_code = c.file_intact && c.data_intact ? HB_EXIT_OK : HB_EXIT_RUNTIME;
	if (exit_code == HB_EXIT_OK)
		printf("verify: intact - the report file and the stored points are as filed\n");
	else if (!c.filed.file_sha256[0] && c.data_intact)
		printf("verify: NOT verifiable - the page went to standard output when filed, so no file hash was stored; "
		       "the points are intact\n");
	else
		printf("verify: NOT intact - %s%s%s\n", c.file_intact ? "" :
		       c.filed.file_sha256[0] ? "the report file differs from the one filed" : "no file hash was stored",
		       !c.file_intact && !c.data_intact ? "; " : "",
		       c.data_intact ? "" : "the stored points differ from those the report rests on");
	hb_report_check_clear(&c);
	return exit_code;
}
