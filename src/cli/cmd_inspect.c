/* src/cli/cmd_inspect.c - the `inspect` command: a lot inspected by ISO 2859-1 sampling at the bench, resumable */
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>
#include <unistd.h>

#include <jansson.h>

#include "cli.h"
#include "../quality/quality.h"
#include "../bench/bench.h"
#include "sweep_opts.h"

typedef struct inspect_args {
	const char *part, *lot, *lcr, *supply, *serials_file, *first_serial, *supplier;
	bool severity_given, irregular;
	long lot_size;
	double aql;
	hb_insp_level level;
	hb_severity severity;
	hb_sweep_plan plan;
	hb_sweep_opts opts;
	bool to_given;
	bool autorun, yes, json, show_fit, resume;
	hb_inspect_part_policy part_fault;
	hb_conditional_policy conditional_policy;
} inspect_args;

/* Where the serial numbers come from, and the prompt's streams. */
typedef struct unit_source {
	char **serials;
	size_t n_serials;
	const char *serials_file;
	const char *first_serial;
	bool autorun;
	hb_inspect_part_policy part_fault;
	FILE *in, *prompt;
	/* [store] sync = after-sweep: each recorded unit is pushed until one push fails (one warning, then
	 * the rest waits for a sync rather than each unit waiting on an unreachable server) */
	hb_db *db;
	const hb_station *station;
	FILE *info;
	bool synced_ok, pushed_any;
} unit_source;

/* The test signal: a current when the text names amps, else a voltage. */
static int take_test_level(const hb_opt *o, const char *text, void *field)
{
	hb_sweep_plan *plan = field;
	char err[200];
	double v;
	(void)o;
	bool amps = strpbrk(text, "Aa") != NULL;
	if (!amps && hb_parse_value(text, "V", &v, err, sizeof err) == HB_OK && v > 0 && v <= 20) {
		plan->level_kind = HB_LEVEL_VOLTAGE;
		plan->level = v;
		return HB_OK;
	}
	if (amps && hb_parse_value(text, "A", &v, err, sizeof err) == HB_OK && v > 0 && v <= 1) {
		plan->level_kind = HB_LEVEL_CURRENT;
		plan->level = v;
		return HB_OK;
	}
	hb_cli_error("--test-level '%s': accepted 1 mV to 20 V (e.g. 0.5V) or 1 uA to 1 A (e.g. 10mA)", text);
	return HB_ERR_ARG;
}

static int match_part_fault(const char *text, int *code)
{
	if (strcasecmp(text, "nonconforming") == 0)
		*code = HB_INSPECT_PART_NONCONFORMING;
	else if (strcasecmp(text, "retest") == 0)
		*code = HB_INSPECT_PART_RETEST;
	else
		return HB_ERR_ARG;
	return HB_OK;
}

static const char *const part_fault_words[] = { "nonconforming", "retest", NULL };

/* The names decision.c gives the policies, so the plan and the option agree. */
static int match_conditional_policy(const char *text, int *code)
{
	hb_conditional_policy policy;
	if (hb_conditional_policy_parse(text, &policy) != HB_OK)
		return HB_ERR_ARG;
	*code = (int)policy;
	return HB_OK;
}

static const char *const conditional_policy_words[] = { "nonconforming", "by-side", NULL };

static const hb_opt inspect_table[] = {
	{ .name = "part", .kind = HB_OPT_TEXT, .arg = "P", .off = offsetof(inspect_args, part),
	  .help = "stored part (required)" },
	{ .name = "lot", .kind = HB_OPT_TEXT, .arg = "LOT", .off = offsetof(inspect_args, lot),
	  .help = "lot code (required)" },
	{ .name = "lot-size", .kind = HB_OPT_LONG, .arg = "N", .min = 2, .max = 1000000000L,
	  .off = offsetof(inspect_args, lot_size), .help = "units in the lot (required)" },
	{ .name = "aql", .kind = HB_OPT_CUSTOM, .arg = "AQL", .unit = "", .parse = hb_opt_take_aql,
	  .off = offsetof(inspect_args, aql),
	  .help = "acceptance quality limit, one of the ISO 2859-1 series (e.g. 0.65 1.0 2.5 4.0; required)" },
	{ .name = "lcr", .kind = HB_OPT_TEXT, .arg = "RES", .off = offsetof(inspect_args, lcr),
	  .help = "the meter's resource (required)" },
	{ .name = "supply", .kind = HB_OPT_TEXT, .arg = "RES", .off = offsetof(inspect_args, supply),
	  .help = "the bias supply's resource (required)" },
	{ .name = "level", .kind = HB_OPT_ENUM, .words = hb_opt_level_words, .match = hb_opt_match_level,
	  .off = offsetof(inspect_args, level), .help = "inspection level (default II)" },
	{ .name = "severity", .kind = HB_OPT_ENUM, .words = hb_opt_severity_words, .match = hb_opt_match_severity,
	  .off = offsetof(inspect_args, severity), .given = HB_OPT_GIVEN(inspect_args, severity_given),
	  .help = "inspection severity (default: the switching rules' for this lot stream; given, it overrides them)" },
	{ .name = "supplier", .kind = HB_OPT_TEXT, .arg = "S", .off = offsetof(inspect_args, supplier),
	  .help = "who delivered the lot: its stream of lots is switched on its own (default: none named)" },
	{ .name = "irregular", .kind = HB_OPT_FLAG, .off = offsetof(inspect_args, irregular),
	  .help = "production of this lot was irregular or delayed (ends reduced inspection, ISO 2859-1:1999 9.3.4)" },
	{ .name = "serials", .kind = HB_OPT_PATH, .arg = "FILE", .off = offsetof(inspect_args, serials_file),
	  .help = "serial numbers in draw order, one per line" },
	{ .name = "first-serial", .kind = HB_OPT_TEXT, .arg = "S", .off = offsetof(inspect_args, first_serial),
	  .help = "count the trailing number up: LOT7-0001, LOT7-0002, ... (neither: type or scan at the prompt)" },
	{ .name = "auto", .kind = HB_OPT_FLAG, .off = offsetof(inspect_args, autorun),
	  .help = "no prompts: measure the units one after another (needs a serial source)" },
	{ .name = "part-fault", .kind = HB_OPT_ENUM, .words = part_fault_words, .match = match_part_fault,
	  .off = offsetof(inspect_args, part_fault),
	  .help = "a unit the part keeps from being measured: nonconforming (default) or retest (see below)" },
	{ .name = "conditional-policy", .kind = HB_OPT_ENUM, .words = conditional_policy_words,
	  .match = match_conditional_policy, .off = offsetof(inspect_args, conditional_policy),
	  .help = "how a conditional unit (non-binary rule) counts: nonconforming (default) or by-side "
		  "(a conditional pass conforms)" },
	{ .name = "resume", .kind = HB_OPT_FLAG, .off = offsetof(inspect_args, resume),
	  .help = "continue a begun lot only (refuses a lot code never begun)" },
	{ .name = "from", .kind = HB_OPT_VALUE, .arg = "A", .unit = "A", .min = 0, .max = 1000,
	  .off = offsetof(inspect_args, plan.from), .help = "first current (default 0)" },
	{ .name = "to", .kind = HB_OPT_VALUE, .arg = "A", .unit = "A", .min = 1e-6, .max = 1000,
	  .off = offsetof(inspect_args, plan.to), .given = HB_OPT_GIVEN(inspect_args, to_given),
	  .help = "top current (default 1.25 x the part's saturation-spec current)" },
	{ .name = "spacing", .kind = HB_OPT_ENUM, .words = hb_sweep_spacing_words, .codes = hb_sweep_spacing_codes,
	  .off = offsetof(inspect_args, plan.spacing), .help = "step spacing" },
	{ .name = "test-level", .kind = HB_OPT_CUSTOM, .arg = "V|A", .parse = take_test_level,
	  .off = offsetof(inspect_args, plan), .given = HB_OPT_GIVEN(inspect_args, opts.level_given),
	  .help = "test signal (default the part's)" },
	{ .name = "yes", .kind = HB_OPT_FLAG, .off = offsetof(inspect_args, yes),
	  .help = "do not ask before sweeping above the station's threshold" },
	{ .name = "show-fit", .kind = HB_OPT_FLAG, .off = offsetof(inspect_args, show_fit),
	  .help = "print each unit's whole fit" },
	{ .name = "json", .kind = HB_OPT_FLAG, .off = offsetof(inspect_args, json),
	  .help = "the lot, plan, decision and every unit as JSON on stdout" },
	HB_SWEEP_OPTIONS(inspect_args),
	{ .name = NULL },
};

const hb_cmd_opts hb_opts_inspect = {
	.name = "inspect",
	.usage = "--part P --lot LOT --lot-size N --aql AQL --lcr RES --supply RES [options]",
	.about = "Inspects a lot by ISO 2859-1 single sampling: shows the plan, stores it on the lot, then\n"
		 "sweeps, fits and judges each sample unit, keeps the tally and decides the lot (rejecting as\n"
		 "soon as Re nonconforming units are found). Paused or interrupted, the same command resumes\n"
		 "the lot where it stopped. Each unit is swept as by 'sweep', its defaults from the part.\n",
	.opts = inspect_table,
	.max_operands = 0,
	.epilog = "--part-fault: a unit the part keeps from being measured (compliance, open winding, reading\n"
		  "out of range) counts as nonconforming, or with retest is not judged, pausing so it is\n"
		  "checked and measured again. Limits may only tighten the station file's and the part's.\n\n"
		  "At each prompt: Enter measures the unit named, a typed serial replaces it, 's' records it\n"
		  "skipped (could not be tested; the next unit drawn replaces it), 'q' pauses with the lot open.\n"
		  "A unit whose verdict is incomplete counts as nonconforming. A bench fault (lost link,\n"
		  "instrument error, time-out) judges nothing and uses no sample position; 2 in a row pause\n"
		  "the inspection with the lot open (docs/inspection.md).\n"
		  "Switching (ISO 2859-1 clause 9, docs/sampling.md): lots of one part and supplier form a stream;\n"
		  "the rules choose normal, tightened or reduced inspection from the lots decided before, and a\n"
		  "discontinued stream refuses new lots until 'henrybench stream P --resume-sampling NOTE'.\n"
		  "Exit status: 0 lot decided (accept or reject: see the output), 1 lot still open (paused:\n"
		  "bench fault, safety limit, 'q', end of the serial list), 2 usage, 130 stopped by Ctrl-C\n"
		  "(lot still open).\n",
};

static int parse_args(int argc, char **argv, inspect_args *a)
{
	memset(a, 0, sizeof *a);
	hb_sweep_plan_defaults(&a->plan);
	a->plan.kind = HB_SWEEP_BIAS;
	a->aql = NAN;
	a->lot_size = -1;
	a->level = HB_LEVEL_II;
	a->severity = HB_SEVERITY_NORMAL;
	a->conditional_policy = HB_CONDITIONAL_NONCONFORMING; /* the consumer-safe reading */
	hb_sweep_opts_init(&a->opts);
	hb_opts_result r;
	if (hb_opts_parse(&hb_opts_inspect, argc, argv, a, &r) != HB_OK)
		return HB_ERR_ARG;
	if (r.done)
		return 1;
	const char *missing = !a->part ? "--part P" : !a->lot ? "--lot CODE" : a->lot_size < 0 ? "--lot-size N" :
			      isnan(a->aql) ? "--aql AQL" : !a->lcr ? "--lcr RESOURCE" : !a->supply ? "--supply RESOURCE" :
			      NULL;
	if (missing) {
		hb_cli_error("inspect: %s is required (try --help)", missing);
		return HB_ERR_ARG;
	}
	if (a->serials_file && a->first_serial) {
		hb_cli_error("inspect: give --serials FILE or --first-serial S, not both");
		return HB_ERR_ARG;
	}
	if (a->autorun && !a->serials_file && !a->first_serial) {
		hb_cli_error("inspect: --auto needs --serials FILE or --first-serial S (nobody types serials)");
		return HB_ERR_ARG;
	}
	return HB_OK;
}

static char *trim(char *s)
{
	while (*s == ' ' || *s == '\t')
		s++;
	size_t n = strlen(s);
	while (n > 0 && (s[n - 1] == '\n' || s[n - 1] == '\r' || s[n - 1] == ' ' || s[n - 1] == '\t'))
		s[--n] = 0;
	return s;
}

static void free_serials(unit_source *src)
{
	for (size_t i = 0; i < src->n_serials; i++)
		free(src->serials[i]);
	free(src->serials);
	src->serials = NULL;
	src->n_serials = 0;
}

/* One serial a line; blank lines and lines starting with '#' are ignored. */
/* A position is recorded and the unit's sweep has ended with the supply's output off. */
static int unit_recorded(void *ctx, const hb_inspect_unit *unit, const hb_inspect_tally *tally)
{
	unit_source *src = ctx;
	(void)unit;
	(void)tally;
	src->pushed_any = true;
	if (src->synced_ok)
		src->synced_ok = hb_cli_sync_after(src->db, src->station, src->info);
	return HB_OK;
}

static int load_serials(const char *path, unit_source *src)
{
	FILE *f = fopen(path, "r");
	if (!f) {
		hb_cli_error("--serials %s: cannot open: %s", path, strerror(errno));
		return HB_ERR_IO;
	}
	char line[512];
	size_t cap = 0;
	int rc = HB_OK;
	unsigned lineno = 0;
	while (fgets(line, sizeof line, f)) {
		lineno++;
		bool whole = strchr(line, '\n') || feof(f);
		char *s = trim(line);
		if (!*s || *s == '#')
			continue;
		/* a line longer than the buffer arrives in pieces: refused whole */
		char why[200];
		if (!whole)
			snprintf(why, sizeof why, "serial: longer than %d bytes, limit %d", (int)sizeof line - 2, HB_TEXT_ID_MAX);
		if (!whole || hb_text_check("serial", s, HB_TEXT_ID_MAX, why, sizeof why) != HB_OK) {
			hb_cli_error("%s:%u: %s", path, lineno, why);
			rc = HB_ERR_ARG;
			break;
		}
		if (src->n_serials == cap) {
			size_t ncap = cap ? cap * 2 : 64;
			char **grown = realloc(src->serials, ncap * sizeof *grown);
			if (!grown) {
				rc = HB_ERR_NOMEM;
				break;
			}
			src->serials = grown;
			cap = ncap;
		}
		src->serials[src->n_serials] = strdup(s);
		if (!src->serials[src->n_serials]) {
			rc = HB_ERR_NOMEM;
			break;
		}
		src->n_serials++;
	}
	if (rc == HB_OK && ferror(f)) {
		hb_cli_error("--serials %s: read error", path);
		rc = HB_ERR_IO;
	}
	fclose(f);
	if (rc == HB_OK && src->n_serials == 0) {
		hb_cli_error("--serials %s: no serial numbers in the file", path);
		rc = HB_ERR_ARG;
	}
	return rc;
}

/* The serial the source names for a sample position; empty when none. */
static void proposed_serial(const unit_source *src, int sequence, char *serial, size_t cap)
{
	serial[0] = 0;
	if (src->serials && (size_t)sequence <= src->n_serials)
		snprintf(serial, cap, "%s", src->serials[sequence - 1]);
	else if (src->first_serial && hb_inspect_serial_nth(src->first_serial, sequence - 1, serial, cap) != HB_OK)
		serial[0] = 0;
}

static hb_inspect_action next_unit(void *ctx, int sequence, const char *complaint, char *serial, size_t cap)
{
	unit_source *src = ctx;
	char proposal[HB_DB_ID_LEN];
	proposed_serial(src, sequence, proposal, sizeof proposal);
	if (src->autorun) {
		if (complaint) {
			hb_cli_error("unit %d: %s", sequence, complaint);
			return HB_INSPECT_PAUSE;
		}
		if (!proposal[0]) {
			hb_cli_error("the serial list %s ends before sample position %d", src->serials_file, sequence);
			return HB_INSPECT_PAUSE;
		}
		snprintf(serial, cap, "%s", proposal);
		return HB_INSPECT_MEASURE;
	}
	if (complaint)
		fprintf(src->prompt, "  %s: name another unit\n", complaint);
	if (proposal[0])
		fprintf(src->prompt, "unit #%d, serial %s: place it in the fixture and press Enter\n"
				     "  (or type its real serial; s = skip, could not be tested; q = pause): ",
			sequence, proposal);
	else
		fprintf(src->prompt, "unit #%d: place it in the fixture, then type or scan its serial (s = skip, q = pause): ",
			sequence);
	fflush(src->prompt);
	char line[256];
	if (!fgets(line, sizeof line, src->in)) {
		fputc('\n', src->prompt);
		return HB_INSPECT_PAUSE;
	}
	/* Answers from a pipe are not echoed: keep the log readable. */
	if (!isatty(fileno(src->in)))
		fputc('\n', src->prompt);
	bool whole = strchr(line, '\n') || feof(src->in);
	char *s = trim(line);
	if (strcasecmp(s, "q") == 0)
		return HB_INSPECT_PAUSE;
	if (strcasecmp(s, "s") == 0) {
		snprintf(serial, cap, "%s", proposal);
		return HB_INSPECT_SKIP;
	}
	/* A serial is one whole line of UTF-8 within its limit: an over-long
	 * line is read to its end (its rest must not become the next answer)
	 * and refused, as is a control character from a confused scanner. */
	char why[200];
	if (!whole) {
		int ch;
		while ((ch = fgetc(src->in)) != EOF && ch != '\n')
			;
		snprintf(serial, cap, "%s", "");
		snprintf(why, sizeof why, "serial: longer than %d bytes, limit %d", (int)sizeof line - 2, HB_TEXT_ID_MAX);
		return next_unit(ctx, sequence, why, serial, cap);
	}
	if (hb_text_check("serial", s, cap - 1 < HB_TEXT_ID_MAX ? cap - 1 : HB_TEXT_ID_MAX, why, sizeof why) != HB_OK) {
		snprintf(serial, cap, "%s", "");
		return next_unit(ctx, sequence, why, serial, cap);
	}
	snprintf(serial, cap, "%s", *s ? s : proposal);
	return HB_INSPECT_MEASURE;
}

/* Only for a unit the part kept from being measured: a loose contact looks
 * like a high-resistance winding, so the operator may re-seat and retry
 * before the policy applies. No skip: replacing a unit that would not
 * measure by the next one would bias the sample toward acceptance. */
static hb_inspect_action sweep_failed(void *ctx, int sequence, const char *serial, const hb_sweep_result *r)
{
	unit_source *src = ctx;
	if (src->autorun)
		return HB_INSPECT_RECORD;
	fprintf(src->prompt, "unit #%d (%s) could not be measured because of the part: %s\n", sequence, serial, r->reason);
	for (;;) {
		fprintf(src->prompt, "  Enter = %s, r = retry (re-seat it first), q = pause: ",
			src->part_fault == HB_INSPECT_PART_RETEST ? "leave it for a retest (pauses)" : "record it NONCONFORMING");
		fflush(src->prompt);
		char line[64];
		if (!fgets(line, sizeof line, src->in)) {
			fputc('\n', src->prompt);
			return HB_INSPECT_PAUSE;
		}
		if (!isatty(fileno(src->in)))
			fputc('\n', src->prompt);
		char *s = trim(line);
		if (!*s)
			return HB_INSPECT_RECORD;
		if (strcasecmp(s, "r") == 0)
			return HB_INSPECT_RETRY;
		if (strcasecmp(s, "q") == 0)
			return HB_INSPECT_PAUSE;
	}
}

static int confirm(const inspect_args *a, const hb_station *st, const unit_source *src)
{
	char question[160];
	snprintf(question, sizeof question,
		 "Each unit is swept to %.4g A, above this station's threshold of %.4g A. Type 'yes' to go on: ",
		 a->plan.to, st->confirm_above);
	/* With --auto nobody is there to answer. */
	return hb_sweep_opts_confirm(st, a->plan.to, a->yes, !a->autorun && isatty(fileno(src->in)), src->in,
				     src->prompt, question);
}

/*
 * The severity of this lot from its stream (part and supplier): a begun lot
 * keeps the severity it was begun with; a new lot gets the switching
 * rules', or --severity, which overrides them and says so. A discontinued
 * stream takes no new lot (exit 1).
 */
static int choose_severity(hb_db *db, const hb_db_part *part, inspect_args *a)
{
	const char *supplier = a->supplier ? a->supplier : "";
	hb_db_lot lot;
	int rc = hb_db_lot_find(db, part->id, a->lot, &lot);
	if (rc == HB_OK && lot.sample_size > 0 && lot.decision == HB_DB_LOT_OPEN) {
		hb_severity begun;
		if (!a->severity_given && hb_iso2859_parse_severity(lot.severity, &begun) == HB_OK)
			a->severity = begun;
		return HB_EXIT_OK;
	}
	if (rc == HB_OK && lot.decision != HB_DB_LOT_OPEN)
		return HB_EXIT_OK; /* decided: the run says so and measures nothing */
	hb_stream s;
	if (hb_stream_load(db, part, supplier, &s) != HB_OK) {
		hb_cli_error("store: %s", hb_db_errmsg(db));
		return HB_EXIT_RUNTIME;
	}
	hb_switch_next next;
	hb_stream_next(&s, a->irregular, &next);
	FILE *info = a->json ? stderr : stdout;
	if (next.discontinued) {
		hb_stream_print_state(stderr, &s, &next);
		hb_cli_error("inspect: lot %s refused: the lot stream of %s (%s) is discontinued (ISO 2859-1:1999 9.4); record "
			     "the supplier's corrective action with 'henrybench stream %s%s%s --resume-sampling NOTE'",
			     a->lot, part->part_number, *supplier ? supplier : "no supplier named", part->part_number,
			     *supplier ? " --supplier " : "", supplier);
		hb_stream_free(&s);
		return HB_EXIT_RUNTIME;
	}
	hb_stream_print_state(info, &s, &next);
	if (a->severity_given && a->severity != next.severity)
		fprintf(info, "  --severity %s overrides the switching rules' %s for lot %s; the lot records it\n",
			hb_iso2859_severity_name(a->severity), hb_iso2859_severity_name(next.severity), a->lot);
	if (!a->severity_given)
		a->severity = next.severity;
	hb_stream_free(&s);
	return HB_EXIT_OK;
}

int hb_cmd_inspect(int argc, char **argv)
{
	inspect_args a;
	int rc = parse_args(argc, argv, &a);
	if (rc == 1)
		return HB_EXIT_OK;
	if (rc != HB_OK)
		return HB_EXIT_USAGE;

	int exit_code = HB_EXIT_RUNTIME;
	hb_db *db = NULL;
	hb_lcr *lcr = NULL;
	hb_supply *supply = NULL;
	FILE *info = a.json ? stderr : stdout;
	hb_station station;
	unit_source src = { .serials_file = a.serials_file, .first_serial = a.first_serial, .autorun = a.autorun,
			    .part_fault = a.part_fault, .in = stdin, .prompt = stderr, .station = &station,
			    .info = info, .synced_ok = true };
	char err[320];
	if (hb_station_load(&station, err, sizeof err) != HB_OK) {
		hb_cli_error("%s", err);
		return HB_EXIT_USAGE;
	}
	if (a.serials_file && load_serials(a.serials_file, &src) != HB_OK) {
		exit_code = HB_EXIT_USAGE;
		goto out;
	}
	hb_sampling_plan check_plan;
	if (hb_iso2859_plan(a.lot_size, a.aql, a.level, a.severity, &check_plan, err, sizeof err) != HB_OK) {
		hb_cli_error("inspect: %s", err);
		exit_code = HB_EXIT_USAGE;
		goto out;
	}
	hb_db_part part;
	rc = hb_sweep_opts_open_part(a.part, &db, &part);
	if (rc != HB_EXIT_OK) {
		exit_code = rc;
		goto out;
	}
	/* Before the question, the cautions and the links. */
	if (hb_cli_check_writable(db) != HB_EXIT_OK)
		goto out;
	/* A decided lot's size is part of its decision: a different --lot-size
	 * is a mistake to name, not a value to ignore. */
	hb_db_lot decided;
	if (hb_db_lot_find(db, part.id, a.lot, &decided) == HB_OK && decided.decision != HB_DB_LOT_OPEN &&
	    decided.lot_size > 0 && decided.lot_size != a.lot_size) {
		hb_cli_error("inspect: lot %s was decided (%s on %s) with lot size %ld; --lot-size %ld would change a "
			     "decided lot: refused",
			     a.lot, hb_db_lot_decision_name(decided.decision), decided.decided, decided.lot_size, a.lot_size);
		exit_code = HB_EXIT_USAGE;
		goto out;
	}
	rc = choose_severity(db, &part, &a);
	if (rc != HB_EXIT_OK) {
		exit_code = rc;
		goto out;
	}
	/* Judging needs the spec's own test conditions, and a sweep a little
	 * past the saturation-spec current so L there is interpolated, not
	 * extrapolated. */
	hb_sweep_opts_apply_conditions(&a.opts, &part, &a.plan);
	if (!a.to_given) {
		double spec = isfinite(part.sat_current_a) && part.sat_current_a > 0 ? part.sat_current_a :
			      isfinite(part.rated_current_a) && part.rated_current_a > 0 ? part.rated_current_a : NAN;
		if (isnan(spec)) {
			hb_cli_error("part %s has no saturation or rated current: give --to A", part.part_number);
			exit_code = HB_EXIT_USAGE;
			goto out;
		}
		a.plan.to = 1.25 * spec;
	}
	/* The same resolution as a sweep: the command line may only tighten,
	 * and a refusal names where a cap comes from. */
	hb_limit_report limits;
	rc = hb_sweep_opts_resolve(&a.opts, &station, &part, &a.plan, &limits, err, sizeof err);
	if (rc == HB_ERR_ARG) {
		hb_cli_error("inspect: %s", err);
		exit_code = HB_EXIT_USAGE;
		goto out;
	}
	if (rc == HB_OK)
		rc = hb_sweep_plan_check(&a.plan, true, err, sizeof err);
	if (rc != HB_OK) {
		hb_cli_error("refusing to start: %s", err);
		exit_code = HB_EXIT_USAGE;
		goto out;
	}
	if (confirm(&a, &station, &src) != HB_OK) {
		exit_code = HB_EXIT_USAGE;
		goto out;
	}

	hb_sweep_install_signals();
	hb_sweep_clear_signal();
	rc = hb_sweep_opts_open_bench(info, a.lcr, a.supply, &lcr, &supply);
	if (rc != HB_EXIT_OK) {
		exit_code = rc;
		goto out;
	}
	if (hb_sweep_opts_check_meter(lcr, &a.plan) != HB_OK) {
		exit_code = HB_EXIT_USAGE;
		goto out;
	}
	{
		char top[48];
		fprintf(info, "part %s, lot %s: each unit swept 0 to %s in %d points at %s\n", part.part_number, a.lot,
			hb_format_si(top, sizeof top, a.plan.to, "A", 4), a.plan.steps,
			hb_format_si(err, sizeof err, a.plan.frequency, "Hz", 4));
	}
	/* Once for the whole lot: the same current flows through every unit. */
	hb_sweep_print_cautions(info, isfinite(part.nominal_h) ? part.nominal_h : 0, a.plan.to, a.plan.limits.max_voltage);

	hb_inspect_config cfg;
	hb_inspect_config_init(&cfg);
	cfg.db = db;
	cfg.lcr = lcr;
	cfg.supply = supply;
	cfg.station = &station;
	cfg.part = &part;
	cfg.lot_code = a.lot;
	cfg.lot_size = a.lot_size;
	cfg.aql = a.aql;
	cfg.level = a.level;
	cfg.severity = a.severity;
	cfg.plan = a.plan;
	cfg.ambient_c = a.opts.ambient_c;
	cfg.allow_overdue = a.opts.allow_overdue;
	cfg.fixture = a.opts.fixture;
	cfg.out = info;
	cfg.progress = info;
	cfg.progress_tty = isatty(fileno(info));
	cfg.verbose_fit = a.show_fit;
	cfg.part_fault = a.part_fault;
	cfg.conditional_policy = a.conditional_policy;
	cfg.resume_only = a.resume;
	cfg.supplier = a.supplier ? a.supplier : "";
	cfg.irregular = a.irregular;
	src.db = db;
	hb_inspect_callbacks cb = { .ctx = &src, .next_unit = next_unit, .sweep_failed = sweep_failed,
				    .after_unit = unit_recorded };
	hb_inspect_result res;
	rc = hb_inspect_run(&cfg, &cb, &res);
	if (res.current_may_flow)
		hb_session_warn_current_may_flow(stderr);
	if (rc != HB_OK) {
		hb_cli_error("inspect: %s", res.message);
		exit_code = rc == HB_ERR_ARG ? HB_EXIT_USAGE : HB_EXIT_RUNTIME;
		goto out;
	}
	if (res.end == HB_INSPECT_ALREADY_DECIDED)
		fprintf(info, "%s; nothing measured\n", res.message);
	if (res.end == HB_INSPECT_DECIDED) {
		/* What the decision did to the stream: the next lot's severity. */
		hb_stream s;
		if (hb_stream_load(db, &part, cfg.supplier, &s) == HB_OK) {
			hb_switch_next next;
			hb_stream_next(&s, false, &next);
			fputs("after this lot, ", info);
			hb_stream_print_state(info, &s, &next);
			hb_stream_free(&s);
		}
	}
	if (a.json) {
		/* The exit code is the lot's, not the printout's. */
		json_t *lj = hb_inspect_lot_json(db, res.lot_id, &res);
		/* The stream after this lot: the severity the next lot gets, and why. */
		hb_stream s;
		if (lj && hb_stream_load(db, &part, cfg.supplier, &s) == HB_OK) {
			hb_switch_next next;
			hb_stream_next(&s, false, &next);
			json_object_set_new(lj, "lot_stream", hb_stream_json(&s, &next));
			hb_stream_free(&s);
		}
		(void)hb_print_json(lj);
	}
	if (res.end == HB_INSPECT_PAUSED) {
		/* The pause line went to the output; a sick bench or a limit also
		 * gets one line on stderr, where a script or a log looks. */
		if (res.pause_cause == HB_CAUSE_BENCH || res.pause_cause == HB_CAUSE_LIMIT)
			hb_cli_error("inspect: lot %s paused at sample position %d: %s", a.lot, res.pause_sequence,
				     res.message);
		exit_code = res.signal_number == SIGINT ? HB_EXIT_SIGINT :
			    res.signal_number ? 128 + res.signal_number : HB_EXIT_RUNTIME;
	}
	else
		exit_code = HB_EXIT_OK;
out:
	/* The engine switched the output off on every path that switched it on. */
	hb_supply_close(supply);
	hb_lcr_close(lcr);
	/* the lot's decision and the last unit, once the bench is safe (after-sweep only) */
	if (src.synced_ok && src.pushed_any)
		(void)hb_cli_sync_after(db, &station, info);
	hb_db_close(db);
	free_serials(&src);
	hb_sweep_restore_signals();
	return exit_code;
}
