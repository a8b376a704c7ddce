/* src/cli/cmd_stream.c - command `stream`: a part's lot stream from one supplier under the switching rules; approval of reduced inspection, resumption after discontinuation */
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <jansson.h>

#include "cli.h"
#include "../quality/quality.h"

typedef struct stream_args {
	const char *supplier, *approve, *withdraw, *resume;
	bool json;
} stream_args;

static const hb_opt stream_table[] = {
	{ .name = "supplier", .kind = HB_OPT_TEXT, .arg = "S", .off = offsetof(stream_args, supplier),
	  .help = "the supplier whose lots form the stream (default: lots naming none)" },
	{ .name = "approve-reduced", .kind = HB_OPT_TEXT, .arg = "NOTE", .off = offsetof(stream_args, approve),
	  .help = "record that the responsible authority approves reduced inspection (who, reference)" },
	{ .name = "withdraw-reduced", .kind = HB_OPT_TEXT, .arg = "NOTE", .off = offsetof(stream_args, withdraw),
	  .help = "record that it withdraws that approval (a reduced stream returns to normal)" },
	{ .name = "resume-sampling", .kind = HB_OPT_TEXT, .arg = "NOTE", .off = offsetof(stream_args, resume),
	  .help = "after a discontinuation: record the supplier's corrective action; inspection resumes tightened" },
	{ .name = "json", .kind = HB_OPT_FLAG, .off = offsetof(stream_args, json),
	  .help = "the stream, its lots and its state as JSON on stdout" },
	{ .name = NULL },
};

const hb_cmd_opts hb_opts_stream = {
	.name = "stream",
	.usage = "PARTNO [--supplier S] [--approve-reduced NOTE | --withdraw-reduced NOTE | --resume-sampling NOTE] [--json]",
	.about = "\nThe lots of one part from one supplier, in the order they were decided, as the switching\n"
		 "rules of ISO 2859-1 clause 9 (MIL-STD-105E 8.3) see them: the severity each was inspected at,\n"
		 "its nonconforming count and decision, the switching score, the rule that fired; then the\n"
		 "severity the next lot gets and why. Records the events the rules need from people: the\n"
		 "responsible authority's approval of reduced inspection, and the supplier's corrective action\n"
		 "after a discontinuation (docs/sampling.md).\n",
	.opts = stream_table,
	.max_operands = 1,
	.epilog = "Rules: normal -> tightened when 2 of 5 or fewer consecutive lots are not accepted;\n"
		  "tightened -> normal after 5 consecutive accepted; normal -> reduced at a switching score of\n"
		  "30 with steady production and approval; reduced -> normal on a lot not accepted, a lot\n"
		  "accepted with Ac < d < Re, irregular production or withdrawn approval; 5 lots not accepted\n"
		  "on tightened discontinue inspection.\n",
};

int hb_cmd_stream(int argc, char **argv)
{
	stream_args a = { 0 };
	hb_opts_result r;
	if (hb_opts_parse(&hb_opts_stream, argc, argv, &a, &r) != HB_OK)
		return HB_EXIT_USAGE;
	if (r.done)
		return HB_EXIT_OK;
	if (r.first + 1 != argc) {
		hb_cli_error(r.first >= argc ? "stream: PARTNO is required (try --help)" : "stream: one PARTNO only (try --help)");
		return HB_EXIT_USAGE;
	}
	if ((a.approve != NULL) + (a.withdraw != NULL) + (a.resume != NULL) > 1) {
		hb_cli_error("stream: give one of --approve-reduced, --withdraw-reduced, --resume-sampling");
		return HB_EXIT_USAGE;
	}
	const char *part_number = argv[r.first];
	if (hb_cli_text_arg("part number", part_number, HB_TEXT_ID_MAX) != HB_OK)
		return HB_EXIT_USAGE;
	const char *supplier = a.supplier ? a.supplier : "";
	int exit_code = HB_EXIT_RUNTIME;
	hb_db *db = NULL;
	hb_stream s;
	memset(&s, 0, sizeof s);
	/* only a change of the stream writes; showing it reads a read-only store too */
	bool change = a.approve || a.withdraw || a.resume;
	int rc = hb_db_open_as(hb_global.db_path, change ? HB_DB_OPEN_CREATE : HB_DB_OPEN_READ, &db);
	if (rc != HB_OK) {
		hb_cli_error("store: %s", db ? hb_db_errmsg(db) : "out of memory");
		if (rc == HB_ERR_NOTFOUND)
			exit_code = HB_EXIT_USAGE;
		goto out;
	}
	hb_db_part part;
	rc = hb_db_part_get(db, part_number, &part);
	if (rc == HB_ERR_NOTFOUND) {
		hb_cli_error("stream: no part '%s' in %s (see 'henrybench part list')", part_number, hb_db_path(db));
		exit_code = HB_EXIT_USAGE;
		goto out;
	}
	if (rc == HB_OK)
		rc = hb_stream_load(db, &part, supplier, &s);
	if (rc != HB_OK) {
		hb_cli_error("store: %s", hb_db_errmsg(db));
		goto out;
	}
	const char *note = a.approve ? a.approve : a.withdraw ? a.withdraw : a.resume;
	if (note) {
		if (!*note) {
			hb_cli_error("stream: the note may not be empty (say who decided, and on what)");
			exit_code = HB_EXIT_USAGE;
			goto out;
		}
		if (a.resume && !s.state.discontinued) {
			hb_cli_error("stream: the lot stream of %s (%s) is not discontinued: nothing to resume", part_number,
				     *supplier ? supplier : "no supplier named");
			goto out;
		}
		hb_db_stream_kind kind = a.approve ? HB_DB_STREAM_APPROVE_REDUCED :
					 a.withdraw ? HB_DB_STREAM_WITHDRAW_REDUCED : HB_DB_STREAM_RESUME;
		if (hb_db_stream_event_add(db, part.id, supplier, kind, note) != HB_OK) {
			hb_cli_error("store: %s", hb_db_errmsg(db));
			goto out;
		}
		hb_stream_free(&s);
		if (hb_stream_load(db, &part, supplier, &s) != HB_OK) {
			hb_cli_error("store: %s", hb_db_errmsg(db));
			goto out;
		}
	}
	hb_switch_next next;
	hb_stream_next(&s, false, &next);
	if (a.json) {
		json_t *j = hb_stream_json(&s, &next);
		if (j)
			json_object_set_new(j, "part_number", json_string(part.part_number));
		if (hb_print_json(j) != HB_OK) {
			hb_cli_error("stream: cannot write the JSON output");
			goto out;
		}
	} else {
		hb_stream_print_lots(stdout, &s);
		hb_stream_print_state(stdout, &s, &next);
	}
	if (fflush(stdout) != 0) {
		hb_cli_error("stream: cannot write to standard output");
		goto out;
	}
	exit_code = HB_EXIT_OK;
out:
	hb_stream_free(&s);
	hb_db_close(db);
	return exit_code;
}
