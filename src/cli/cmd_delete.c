/* src/cli/cmd_delete.c - `sweep delete ID` and `part delete PARTNO`: refused where verdicts or lot decisions depend on the record unless forced, every deletion logged */
#include <stdbool.h>
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "../../db/hb_db.h"
#include "../bench/bench.h"
#include "cli.h"

typedef struct delete_args {
	bool force;
	const char *reason;
} delete_args;

static const hb_opt delete_table[] = {
	{ .name = "force", .kind = HB_OPT_FLAG, .off = offsetof(delete_args, force),
	  .help = "delete even where verdicts or lot records depend on it (needs --reason; logged)" },
	{ .name = "reason", .kind = HB_OPT_TEXT, .arg = "TEXT", .off = offsetof(delete_args, reason),
	  .help = "why, kept in the store's deletions log" },
	{ .name = NULL },
};

const hb_cmd_opts hb_opts_sweep_delete = {
	.name = "sweep delete",
	.usage = "ID [--reason TEXT] [--force]",
	.about = "\nDeletes a stored sweep with its points, fits and verdicts. A sweep with verdicts, or one a\n"
		 "lot's inspection record names, is kept unless --force is given with --reason; the lot's\n"
		 "record then keeps its outcome and notes the deletion. Every deletion is logged in the\n"
		 "store (time, operator, what, why).\n",
	.opts = delete_table,
	.max_operands = 1,
};

const hb_cmd_opts hb_opts_part_delete = {
	.name = "part delete",
	.usage = "PARTNO [--reason TEXT] [--force]",
	.about = "\nDeletes a part with its units, lots and their sweeps. Refused where a sweep has verdicts,\n"
		 "a lot has inspection records or a decision, unless --force is given with --reason.\n"
		 "Every deletion is logged in the store (time, operator, what, why).\n",
	.opts = delete_table,
	.max_operands = 1,
};

/* Parses the line; 1 after --help, HB_EXIT_USAGE after an error. */
static int parse(const hb_cmd_opts *cmd, int argc, char **argv, delete_args *a, const char **operand)
{
	memset(a, 0, sizeof *a);
	hb_opts_result r;
	if (hb_opts_parse(cmd, argc, argv, a, &r) != HB_OK)
		return HB_EXIT_USAGE;
	if (r.done)
		return 1;
	if (r.first != argc - 1) {
		hb_cli_error("%s needs one %s (try 'henrybench %s --help')", cmd->name,
			     strcmp(cmd->name, "part delete") == 0 ? "PARTNO" : "ID", cmd->name);
		return HB_EXIT_USAGE;
	}
	if (a->force && (!a->reason || !*a->reason)) {
		hb_cli_error("%s --force needs --reason TEXT: a forced deletion is logged with why", cmd->name);
		return HB_EXIT_USAGE;
	}
	*operand = argv[r.first];
	if (strcmp(cmd->name, "part delete") == 0 &&
	    hb_cli_text_arg("part number", *operand, HB_TEXT_ID_MAX) != HB_OK)
		return HB_EXIT_USAGE;
	return HB_EXIT_OK;
}

static void fill_log(hb_db_deletion *log, const delete_args *a)
{
	memset(log, 0, sizeof *log);
	hb_station st;
	char err[256];
	/* The operator named by the station file, else $USER. */
	if (hb_station_load(&st, err, sizeof err) == HB_OK)
		snprintf(log->operator_name, sizeof log->operator_name, "%s", st.operator_name);
	snprintf(log->reason, sizeof log->reason, "%s", a->reason ? a->reason : "");
	log->forced = a->force;
}

int hb_cmd_sweep_delete(int argc, char **argv)
{
	delete_args a;
	const char *operand = NULL;
	int rc = parse(&hb_opts_sweep_delete, argc, argv, &a, &operand);
	if (rc != HB_EXIT_OK)
		return rc == 1 ? HB_EXIT_OK : rc;
	long long id = 0;
	if (hb_cli_parse_sweep_id(operand, &id) != HB_OK)
		return HB_EXIT_USAGE;
	int exit_code = HB_EXIT_RUNTIME;
	hb_db *db = hb_cli_open_store_read(&exit_code);
	if (!db)
		return exit_code;
	hb_db_sweep_deps deps;
	hb_db_sweep *s = calloc(1, sizeof *s);
	if (!s) {
		hb_cli_error("out of memory");
		goto out;
	}
	rc = hb_db_sweep_get(db, id, s);
	if (rc == HB_OK)
		rc = hb_db_sweep_dependents(db, id, &deps);
	if (rc != HB_OK) {
		hb_cli_error("%s", hb_db_errmsg(db));
		exit_code = rc == HB_ERR_NOTFOUND ? HB_EXIT_USAGE : HB_EXIT_RUNTIME;
		goto out;
	}
	if (s->status == HB_DB_RUNNING) {
		hb_cli_error("sweep delete: sweep %lld is running (process %ld on %s); it can be deleted once it ended", id,
			     s->pid, s->host);
		exit_code = HB_EXIT_USAGE;
		goto out;
	}
	if ((deps.verdicts > 0 || deps.inspections > 0) && !a.force) {
		hb_cli_error("sweep delete: sweep %lld has %ld verdicts and is named by %ld lot inspection records; "
			     "kept (give --force --reason TEXT to delete it anyway)",
			     id, deps.verdicts, deps.inspections);
		exit_code = HB_EXIT_USAGE;
		goto out;
	}
	hb_db_deletion log;
	fill_log(&log, &a);
	if (hb_db_sweep_delete(db, id, &log) != HB_OK) {
		hb_cli_error("sweep delete: %s", hb_db_errmsg(db));
		goto out;
	}
	printf("deleted sweep %lld: %ld points, %ld fits, %ld verdicts%s; logged in %s\n", id, deps.points, deps.fits,
	       deps.verdicts, deps.inspections ? ", lot inspection records unlinked" : "", hb_db_path(db));
	exit_code = HB_EXIT_OK;
out:
	free(s);
	hb_db_close(db);
	return exit_code;
}

int hb_cmd_part_delete(int argc, char **argv)
{
	delete_args a;
	const char *pn = NULL;
	int rc = parse(&hb_opts_part_delete, argc, argv, &a, &pn);
	if (rc != HB_EXIT_OK)
		return rc == 1 ? HB_EXIT_OK : rc;
	int exit_code = HB_EXIT_RUNTIME;
	hb_db *db = hb_cli_open_store_read(&exit_code);
	if (!db)
		return exit_code;
	hb_db_part p;
	hb_db_part_deps deps;
	rc = hb_db_part_get(db, pn, &p);
	if (rc == HB_OK)
		rc = hb_db_part_dependents(db, p.id, &deps);
	if (rc != HB_OK) {
		hb_cli_error("%s", hb_db_errmsg(db));
		exit_code = rc == HB_ERR_NOTFOUND ? HB_EXIT_USAGE : HB_EXIT_RUNTIME;
		goto out;
	}
	if ((deps.verdicts > 0 || deps.decided_lots > 0 || deps.inspections > 0) && !a.force) {
		hb_cli_error("part delete: part %s has %ld sweeps with %ld verdicts and %ld lots (%ld decided, %ld inspection "
			     "records); kept (give --force --reason TEXT to delete it anyway)",
			     pn, deps.sweeps, deps.verdicts, deps.lots, deps.decided_lots, deps.inspections);
		exit_code = HB_EXIT_USAGE;
		goto out;
	}
	hb_db_deletion log;
	fill_log(&log, &a);
	if (hb_db_part_delete(db, p.id, &log) != HB_OK) {
		hb_cli_error("part delete: %s", hb_db_errmsg(db));
		goto out;
	}
	printf("deleted part %s: %ld units, %ld lots, %ld sweeps; logged in %s\n", pn, deps.units, deps.lots, deps.sweeps,
	       hb_db_path(db));
	exit_code = HB_EXIT_OK;
out:
	hb_db_close(db);
	return exit_code;
}
