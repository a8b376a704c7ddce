/* src/cli/cmd_instrument.c - command `instrument`: the register of meters and supplies (list, show, edit) and what one measured (affected) */
#include <math.h>
#include <stdbool.h>
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include <jansson.h>

#include "../../db/hb_db.h"
#include "../bench/bench.h"
#include "cli.h"

typedef struct instrument_args {
	const char *cal_date, *due_date, *certificate, *accuracy, *freq_above, *since;
	bool json;
} instrument_args;

static const hb_opt instrument_table[] = {
	{ .name = "cal-date", .kind = HB_OPT_TEXT, .arg = "YYYY-MM-DD", .off = offsetof(instrument_args, cal_date),
	  .help = "edit: date of the last calibration" },
	{ .name = "due-date", .kind = HB_OPT_TEXT, .arg = "YYYY-MM-DD", .off = offsetof(instrument_args, due_date),
	  .help = "edit: date the next calibration is due" },
	{ .name = "certificate", .kind = HB_OPT_TEXT, .arg = "TEXT", .off = offsetof(instrument_args, certificate),
	  .help = "edit: the calibration certificate's reference" },
	{ .name = "accuracy", .kind = HB_OPT_TEXT, .arg = "SPEC", .off = offsetof(instrument_args, accuracy),
	  .help = "edit: accuracy of this instrument, e.g. 0.1% (meter) or 0.05%+1mA (supply); 'none' clears" },
	{ .name = "accuracy-freq-above", .kind = HB_OPT_TEXT, .arg = "F:PCT", .off = offsetof(instrument_args, freq_above),
	  .help = "edit: meter, fraction added above a frequency, e.g. 100kHz:0.05%; 'none' clears" },
	{ .name = "since", .kind = HB_OPT_TEXT, .arg = "YYYY-MM-DD", .off = offsetof(instrument_args, since),
	  .help = "affected: only sweeps started on or after this date (UTC; required)" },
	{ .name = "json", .kind = HB_OPT_FLAG, .off = offsetof(instrument_args, json), .help = "machine-readable output" },
	{ .name = NULL },
};

const hb_cmd_opts hb_opts_instrument = {
	.name = "instrument",
	.usage = "list [--json]\n       henrybench instrument show SERIAL [--json]\n"
		 "       henrybench instrument edit SERIAL [--cal-date D] [--due-date D] [--certificate TEXT] [--accuracy SPEC]\n"
		 "       henrybench instrument affected SERIAL --since YYYY-MM-DD [--json]",
	.about = "The register of the meters and supplies the bench has seen, keyed by maker, model and serial\n"
		 "from *IDN? (recorded the first time a sweep, identify or fixture opens one), with its\n"
		 "calibration status and an accuracy that overrides the profile's and the station file's.\n",
	.opts = instrument_table,
	.max_operands = 2,
	.operands = "list show edit affected",
	.epilog = "A sweep warns when an instrument is past its due date or has no calibration recorded; with\n"
		  "[calibration] overdue = refuse in the station file it refuses unless --allow-overdue is given.\n"
		  "See docs/traceability.md.\n",
};

static json_t *instrument_json(const hb_db_instrument *in)
{
	char status[300];
	hb_cal_state st = hb_trace_cal_state(in, NULL, status, sizeof status);
	json_t *o = json_object();
	json_object_set_new(o, "id", json_integer(in->id));
	json_object_set_new(o, "kind", json_string(in->kind));
	json_object_set_new(o, "maker", json_string(in->maker));
	json_object_set_new(o, "model", json_string(in->model));
	json_object_set_new(o, "serial", json_string(in->serial));
	json_object_set_new(o, "firmware", json_string(in->firmware));
	json_object_set_new(o, "first_seen", json_string(in->first_seen));
	json_object_set_new(o, "last_seen", json_string(in->last_seen));
	json_object_set_new(o, "accuracy", in->accuracy[0] ? json_string(in->accuracy) : json_null());
	json_object_set_new(o, "accuracy_freq_above",
			    in->accuracy_freq_above[0] ? json_string(in->accuracy_freq_above) : json_null());
	json_object_set_new(o, "cal_date", in->cal_date[0] ? json_string(in->cal_date) : json_null());
	json_object_set_new(o, "due_date", in->due_date[0] ? json_string(in->due_date) : json_null());
	json_object_set_new(o, "certificate", in->certificate[0] ? json_string(in->certificate) : json_null());
	static const char *const states[] = { "in-calibration", "overdue", "unknown" };
	json_object_set_new(o, "calibration", json_string(states[st]));
	json_object_set_new(o, "calibration_text", json_string(status));
	return o;
}

static int find(hb_db *db, const char *serial, hb_db_instrument *in)
{
	int rc = hb_db_instrument_find(db, serial, in);
	if (rc != HB_OK) {
		hb_cli_error("%s", hb_db_errmsg(db));
		return rc == HB_ERR_NOTFOUND || rc == HB_ERR_ARG ? HB_EXIT_USAGE : HB_EXIT_RUNTIME;
	}
	return HB_EXIT_OK;
}

static int do_list(hb_db *db, const instrument_args *a)
{
	hb_db_instrument *rows = NULL;
	size_t n = 0;
	if (hb_db_instrument_list(db, &rows, &n) != HB_OK) {
		hb_cli_error("%s", hb_db_errmsg(db));
		return HB_EXIT_RUNTIME;
	}
	if (a->json) {
		json_t *arr = json_array();
		for (size_t i = 0; i < n; i++)
			json_array_append_new(arr, instrument_json(&rows[i]));
		free(rows);
		return hb_print_json(arr) == HB_OK ? HB_EXIT_OK : HB_EXIT_RUNTIME;
	}
	if (n == 0)
		printf("no instruments recorded yet (a sweep, identify or fixture records them)\n");
	for (size_t i = 0; i < n; i++) {
		char status[300];
		hb_trace_cal_state(&rows[i], NULL, status, sizeof status);
		printf("%-6s %-16s %s %s (firmware %s), first seen %s\n       %s\n", rows[i].kind, rows[i].serial,
		       rows[i].maker, rows[i].model, rows[i].firmware[0] ? rows[i].firmware : "-", rows[i].first_seen,
		       status);
	}
	free(rows);
	return HB_EXIT_OK;
}

static void show_line(const char *label, const char *value)
{
	printf("  %-22s %s\n", label, value && *value ? value : "-");
}

static int do_show(hb_db *db, const char *serial, const instrument_args *a)
{
	hb_db_instrument in;
	int rc = find(db, serial, &in);
	if (rc != HB_EXIT_OK)
		return rc;
	if (a->json)
		return hb_print_json(instrument_json(&in)) == HB_OK ? HB_EXIT_OK : HB_EXIT_RUNTIME;
	char status[300];
	hb_trace_cal_state(&in, NULL, status, sizeof status);
	printf("instrument %s (%s)\n", in.serial, in.kind);
	show_line("maker", in.maker);
	show_line("model", in.model);
	show_line("firmware", in.firmware);
	show_line("first seen", in.first_seen);
	show_line("last seen", in.last_seen);
	show_line("calibrated", in.cal_date);
	show_line("due", in.due_date);
	show_line("certificate", in.certificate);
	show_line("status", status);
	char acc[200];
	snprintf(acc, sizeof acc, "%s%s%s%s", in.accuracy[0] ? in.accuracy : "",
		 in.accuracy_freq_above[0] ? "; above " : "", in.accuracy_freq_above,
		 in.accuracy[0] ? " (overrides the profile and the station file)" : "");
	show_line("accuracy", in.accuracy[0] ? acc : "the profile's (or the station file's)");
	return HB_EXIT_OK;
}

static int take_date(const char *option, const char *text, char *out, size_t cap)
{
	if (!text)
		return HB_OK;
	if (strcmp(text, "none") == 0) {
		out[0] = '\0';
		return HB_OK;
	}
	if (!hb_trace_valid_date(text)) {
		hb_cli_error("%s '%s' is not a date: accepted YYYY-MM-DD (or none)", option, text);
		return HB_ERR_ARG;
	}
	snprintf(out, cap, "%s", text);
	return HB_OK;
}

static int do_edit(hb_db *db, const char *serial, const instrument_args *a)
{
	if (!a->cal_date && !a->due_date && !a->certificate && !a->accuracy && !a->freq_above) {
		hb_cli_error("instrument edit: nothing to change (give --cal-date, --due-date, --certificate or --accuracy)");
		return HB_EXIT_USAGE;
	}
	hb_db_instrument in;
	int rc = find(db, serial, &in);
	if (rc != HB_EXIT_OK)
		return rc;
	if (take_date("--cal-date", a->cal_date, in.cal_date, sizeof in.cal_date) != HB_OK ||
	    take_date("--due-date", a->due_date, in.due_date, sizeof in.due_date) != HB_OK)
		return HB_EXIT_USAGE;
	if (in.cal_date[0] && in.due_date[0] && strcmp(in.due_date, in.cal_date) < 0) {
		hb_cli_error("--due-date %s is before the calibration date %s", in.due_date, in.cal_date);
		return HB_EXIT_USAGE;
	}
	if (a->certificate)
		snprintf(in.certificate, sizeof in.certificate, "%s", strcmp(a->certificate, "none") ? a->certificate : "");
	bool meter = strcmp(in.kind, "lcr") == 0;
	if (a->accuracy)
		snprintf(in.accuracy, sizeof in.accuracy, "%s", strcmp(a->accuracy, "none") ? a->accuracy : "");
	if (a->freq_above) {
		if (!meter) {
			hb_cli_error("--accuracy-freq-above: %s is a supply; the term is a meter's", in.serial);
			return HB_EXIT_USAGE;
		}
		snprintf(in.accuracy_freq_above, sizeof in.accuracy_freq_above, "%s",
			 strcmp(a->freq_above, "none") ? a->freq_above : "");
	}
	/* Checked in the form the sweeps will read it. */
	hb_accuracy acc;
	char why[200];
	if (hb_trace_instrument_accuracy(&in, &acc, why, sizeof why) != HB_OK) {
		hb_cli_error("--accuracy: %s (a %s takes e.g. %s)", why, meter ? "meter" : "supply",
			     meter ? "0.1% and --accuracy-freq-above 100kHz:0.05%" : "0.05%+1mA");
		return HB_EXIT_USAGE;
	}
	if (hb_db_instrument_update(db, &in) != HB_OK) {
		hb_cli_error("%s", hb_db_errmsg(db));
		return HB_EXIT_RUNTIME;
	}
	char status[300];
	hb_trace_cal_state(&in, NULL, status, sizeof status);
	printf("instrument %s: %s\n", in.serial, status);
	return HB_EXIT_OK;
}

/* Midnight UTC of a YYYY-MM-DD date, as unix seconds. */
static double date_unix(const char *date)
{
	struct tm tm;
	memset(&tm, 0, sizeof tm);
	sscanf(date, "%4d-%2d-%2d", &tm.tm_year, &tm.tm_mon, &tm.tm_mday);
	tm.tm_year -= 1900;
	tm.tm_mon -= 1;
	return (double)timegm(&tm);
}

static int do_affected(hb_db *db, const char *serial, const instrument_args *a)
{
	if (!a->since) {
		hb_cli_error("instrument affected needs --since YYYY-MM-DD (the date of the last good calibration)");
		return HB_EXIT_USAGE;
	}
	if (!hb_trace_valid_date(a->since)) {
		hb_cli_error("--since '%s' is not a date: accepted YYYY-MM-DD", a->since);
		return HB_EXIT_USAGE;
	}
	hb_db_instrument in;
	int rc = find(db, serial, &in);
	if (rc != HB_EXIT_OK)
		return rc;
	hb_db_affected *rows = NULL;
	size_t n = 0;
	if (hb_db_instrument_affected(db, in.id, date_unix(a->since), &rows, &n) != HB_OK) {
		hb_cli_error("%s", hb_db_errmsg(db));
		return HB_EXIT_RUNTIME;
	}
	size_t counts[3] = { 0, 0, 0 };
	for (size_t i = 0; i < n; i++)
		counts[strcmp(rows[i].what, "sweep") == 0 ? 0 : strcmp(rows[i].what, "verdict") == 0 ? 1 : 2]++;
	if (a->json) {
		json_t *root = json_object();
		json_object_set_new(root, "instrument", instrument_json(&in));
		json_object_set_new(root, "since", json_string(a->since));
		json_t *arr[3] = { json_array(), json_array(), json_array() };
		for (size_t i = 0; i < n; i++) {
			const hb_db_affected *r = &rows[i];
			int k = strcmp(r->what, "sweep") == 0 ? 0 : strcmp(r->what, "verdict") == 0 ? 1 : 2;
			json_t *o = json_object();
			json_object_set_new(o, "id", json_integer(r->id));
			if (k != 2)
				json_object_set_new(o, "sweep_id", json_integer(r->sweep_id));
			json_object_set_new(o, "at", json_string(r->at));
			json_object_set_new(o, "role", json_string(r->role));
			json_object_set_new(o, "part", json_string(r->part_number));
			if (k != 2)
				json_object_set_new(o, "unit", json_string(r->serial));
			json_object_set_new(o, "lot", r->lot_code[0] ? json_string(r->lot_code) : json_null());
			json_object_set_new(o, k == 0 ? "status" : k == 1 ? "verdict" : "decision", json_string(r->detail));
			json_array_append_new(arr[k], o);
		}
		json_object_set_new(root, "sweeps", arr[0]);
		json_object_set_new(root, "verdicts", arr[1]);
		json_object_set_new(root, "lots", arr[2]);
		free(rows);
		return hb_print_json(root) == HB_OK ? HB_EXIT_OK : HB_EXIT_RUNTIME;
	}
	printf("%s %s %s serial %s since %s: %zu sweep%s, %zu verdict%s, %zu lot%s\n", in.kind, in.maker, in.model,
	       in.serial, a->since, counts[0], counts[0] == 1 ? "" : "s", counts[1], counts[1] == 1 ? "" : "s", counts[2],
	       counts[2] == 1 ? "" : "s");
	for (size_t i = 0; i < n; i++) {
		const hb_db_affected *r = &rows[i];
		if (strcmp(r->what, "sweep") == 0)
			printf("sweep %-5lld %s  %s unit %s%s%s  %s (as %s)\n", (long long)r->id, r->at, r->part_number,
			       r->serial, r->lot_code[0] ? " lot " : "", r->lot_code, r->detail, r->role);
		else if (strcmp(r->what, "verdict") == 0)
			printf("  verdict %-5lld %s\n", (long long)r->id, r->detail);
		else
			printf("lot   %-5lld %s %s: decision %s%s%s\n", (long long)r->id, r->part_number, r->lot_code, r->detail,
			       r->at[0] ? " at " : "", r->at);
	}
	free(rows);
	return HB_EXIT_OK;
}

int hb_cmd_instrument(int argc, char **argv)
{
	instrument_args a;
	memset(&a, 0, sizeof a);
	hb_opts_result r;
	if (hb_opts_parse(&hb_opts_instrument, argc, argv, &a, &r) != HB_OK)
		return HB_EXIT_USAGE;
	if (r.done)
		return HB_EXIT_OK;
	int nops = argc - r.first;
	const char *sub = nops > 0 ? argv[r.first] : NULL;
	const char *serial = nops > 1 ? argv[r.first + 1] : NULL;
	if (!sub) {
		hb_opts_help(&hb_opts_instrument, stderr);
		return HB_EXIT_USAGE;
	}
	bool list = strcmp(sub, "list") == 0;
	if (!list && strcmp(sub, "show") && strcmp(sub, "edit") && strcmp(sub, "affected")) {
		hb_cli_error("instrument: unknown subcommand '%s' (accepted: list, show, edit, affected)", sub);
		return HB_EXIT_USAGE;
	}
	if (list ? nops != 1 : nops != 2) {
		hb_cli_error("instrument %s %s", sub, list ? "takes no operand" : "needs exactly one SERIAL");
		return HB_EXIT_USAGE;
	}
	/* only edit writes: the others read a read-only store too */
	int open_exit = HB_EXIT_RUNTIME;
	hb_db *db = strcmp(sub, "edit") == 0 ? hb_cli_open_store() : hb_cli_open_store_read(&open_exit);
	if (!db)
		return open_exit;
	int rc;
	if (list)
		rc = do_list(db, &a);
	else if (strcmp(sub, "show") == 0)
		rc = do_show(db, serial, &a);
	else if (strcmp(sub, "edit") == 0)
		rc = do_edit(db, serial, &a);
	else
		rc = do_affected(db, serial, &a);
	hb_db_close(db);
	return rc;
}
