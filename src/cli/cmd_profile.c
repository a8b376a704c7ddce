/* src/cli/cmd_profile.c - command `profile`: check a profile against its instrument operation by operation, start a new profile from an *IDN? reply */
#include <ctype.h>
#include <errno.h>
#include <fcntl.h>
#include <math.h>
#include <stdbool.h>
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include "../../drivers/hb_drivers.h"
#include "../bench/bench.h"
#include "cli.h"

/* The check current when energised: small enough that no part stores
 * energy worth a caution (1/2 L I^2 < 1 mJ for L < 20 H), large enough to
 * read back on any bias supply (common practice: 1 mA resolution). */
#define CHECK_CURRENT_A 0.010
#define CHECK_VOLTAGE_V 1.0
#define CHECK_RAMP_A_S 0.1

typedef struct profile_args {
	const char *profile;
	bool energise, corrections;
	double max_current, max_voltage;
	bool max_current_given, max_voltage_given;
	const char *from, *out;
	int kind;
} profile_args;

static const char *const kind_words[] = { "lcr", "supply", NULL };

static const hb_opt profile_table[] = {
	{ .name = "profile", .kind = HB_OPT_TEXT, .arg = "NAME|PATH", .off = offsetof(profile_args, profile),
	  .help = "check: the profile to try (default: the one *IDN? matches)" },
	{ .name = "energise", .kind = HB_OPT_FLAG, .off = offsetof(profile_args, energise),
	  .help = "check a supply: ramp a small current up, read it back, ramp down, output off" },
	{ .name = "max-current", .kind = HB_OPT_VALUE, .arg = "A", .unit = "A", .min = 1e-6, .max = 1,
	  .off = offsetof(profile_args, max_current), .given = HB_OPT_GIVEN(profile_args, max_current_given),
	  .help = "check --energise: the current cap (the check drives at most 10 mA); only tightens the station's" },
	{ .name = "max-voltage", .kind = HB_OPT_VALUE, .arg = "V", .unit = "V", .min = 0.01, .max = 60,
	  .off = offsetof(profile_args, max_voltage), .given = HB_OPT_GIVEN(profile_args, max_voltage_given),
	  .help = "check --energise: the supply's voltage limit (default 1 V); only tightens the station's" },
	{ .name = "corrections", .kind = HB_OPT_FLAG, .off = offsetof(profile_args, corrections),
	  .help = "check a meter: send correct.open and correct.short too (fixture open, then shorted)" },
	{ .name = "from", .kind = HB_OPT_TEXT, .arg = "RESOURCE", .off = offsetof(profile_args, from),
	  .help = "new: the instrument whose *IDN? reply the profile matches" },
	{ .name = "out", .kind = HB_OPT_PATH, .arg = "FILE", .off = offsetof(profile_args, out),
	  .help = "new: where to write it (default MAKER-MODEL.ini here; '-' standard output; never overwritten)" },
	{ .name = "kind", .kind = HB_OPT_ENUM, .words = kind_words, .off = offsetof(profile_args, kind),
	  .help = "new: lcr or supply, when no profile tells it from *IDN?" },
	{ .name = NULL },
};

const hb_cmd_opts hb_opts_profile = {
	.name = "profile",
	.usage = "check RESOURCE [--profile NAME|PATH] [--corrections] [--energise --max-current A [--max-voltage V]]\n"
		 "       henrybench profile new --from RESOURCE [--out FILE] [--kind lcr|supply]",
	.about = "\nBring-up of a new instrument. 'check' sends each operation of the profile and prints,\n"
		 "per operation, whether it works, fails or is not in the profile, what went out, what came\n"
		 "back and how the profile read it. A supply is only read unless --energise: then the\n"
		 "set-point, output and reset go through the ramp state machine, at most 10 mA, and the\n"
		 "output ends off. A meter's corrections are held back unless --corrections (the built-in\n"
		 "simulator sim:lcr has no stored correction to lose: they are always sent).\n"
		 "'new' writes a starting profile: match keys from the *IDN? reply, every operation from the\n"
		 "generic profile of its kind, to be edited and checked (docs/profiles.md, 'Bring-up').\n",
	.opts = profile_table,
	.max_operands = 2,
	.operands = "check new",
	.epilog = "exit status: 0 every operation sent works, 1 one fails or the instrument does not answer, 2 bad usage\n",
};

static const char *result_word(hb_pcheck_result r)
{
	static const char *const words[] = { "works", "FAILS", "not in profile", "held back" };
	return words[r];
}

static void print_report(const char *resource, const hb_pcheck_report *r)
{
	printf("%s at %s answers *IDN? '%s'\n", r->kind == HB_KIND_LCR ? "meter" : "supply", resource, r->idn.raw);
	printf("profile %s (%s)%s\n\n", r->profile, r->profile_path[0] ? r->profile_path : "?",
	       r->forced ? ", forced" : ", matched on *IDN?");
	for (size_t i = 0; i < r->n; i++) {
		const hb_pcheck_item *it = &r->items[i];
		printf("%-30s %s\n", it->op, result_word(it->result));
		/* what went out and came back, line by line */
		for (const char *p = it->exchange; *p;) {
			const char *nl = strchr(p, '\n');
			int len = nl ? (int)(nl - p) : (int)strlen(p);
			printf("    %.*s\n", len, p);
			p = nl ? nl + 1 : p + len;
		}
		if (it->read_as[0] && it->result == HB_PCHECK_WORKS)
			printf("    read as: %s\n", it->read_as);
		if (it->note[0])
			printf("    %s\n", it->note);
	}
	printf("\n%d work, %d fail, %d not in profile, %d held back\n", r->works, r->fails, r->absent, r->held);
}

static void cli_notice(void *ctx, const char *text)
{
	(void)ctx;
	hb_cli_error("%s", text);
}

static int profile_check(profile_args *a, const char *resource_in)
{
	char resource[1200];
	if (a->profile)
		snprintf(resource, sizeof resource, "%s%cprofile=%s", resource_in, strchr(resource_in, '?') ? '&' : '?',
			 a->profile);
	else
		snprintf(resource, sizeof resource, "%s", resource_in);
	hb_pcheck_options opt = { .resource = resource, .corrections = a->corrections, .trace = hb_global.trace,
				  .notice = cli_notice };
	if (!a->energise && (a->max_current_given || a->max_voltage_given)) {
		hb_cli_error("profile check: --max-current and --max-voltage go with --energise");
		return HB_EXIT_USAGE;
	}
	if (a->energise) {
		hb_station st;
		char err[320];
		if (hb_station_load(&st, err, sizeof err) != HB_OK) {
			hb_cli_error("%s", err);
			return HB_EXIT_USAGE;
		}
		if (st.lock_limits && (a->max_current_given || a->max_voltage_given)) {
			hb_cli_error("profile check: the station file locks the limits (lock_limits = yes, %s): no "
				     "--max-current or --max-voltage",
				     st.path);
			return HB_EXIT_USAGE;
		}
		double cap = a->max_current_given ? a->max_current : st.max_current;
		if (!isfinite(cap)) {
			hb_cli_error("profile check --energise needs --max-current A (the station file sets none)");
			return HB_EXIT_USAGE;
		}
		/* Limits only tighten: the command line never above the station file. */
		if (a->max_current_given && isfinite(st.max_current) && a->max_current > st.max_current) {
			hb_cli_error("profile check: --max-current %g A is above the station file's max_current %g A (%s): "
				     "limits only tighten",
				     a->max_current, st.max_current, st.path);
			return HB_EXIT_USAGE;
		}
		if (a->max_voltage_given && isfinite(st.max_voltage) && a->max_voltage > st.max_voltage) {
			hb_cli_error("profile check: --max-voltage %g V is above the station file's max_voltage %g V (%s): "
				     "limits only tighten",
				     a->max_voltage, st.max_voltage, st.path);
			return HB_EXIT_USAGE;
		}
		opt.energise = true;
		opt.current_a = fmin(cap, CHECK_CURRENT_A);
		opt.voltage_limit_v = a->max_voltage_given ? a->max_voltage : CHECK_VOLTAGE_V;
		if (isfinite(st.max_voltage))
			opt.voltage_limit_v = fmin(opt.voltage_limit_v, st.max_voltage);
		opt.ramp_rate = isfinite(st.ramp_rate) ? fmin(st.ramp_rate, CHECK_RAMP_A_S) : CHECK_RAMP_A_S;
		double thr = isfinite(st.off_threshold) ? st.off_threshold : HB_STATION_OFF_THRESHOLD;
		/* Below the check current, or the decay could not be seen. */
		opt.off_threshold = fmin(thr, 0.5 * opt.current_a);
	}
	hb_instrument_kind kind;
	hb_idn idn;
	char err[700];
	int rc = hb_pcheck_kind(resource, &kind, &idn, err, sizeof err);
	if (rc != HB_OK) {
		hb_cli_error("profile check: %s", err);
		return rc == HB_ERR_NOTFOUND || rc == HB_ERR_ARG || rc == HB_ERR_PROFILE ? HB_EXIT_USAGE : HB_EXIT_RUNTIME;
	}
	if (opt.energise && kind != HB_KIND_SUPPLY) {
		hb_cli_error("profile check: --energise is for a supply; %s is a meter", resource_in);
		return HB_EXIT_USAGE;
	}
	if (opt.corrections && kind != HB_KIND_LCR) {
		hb_cli_error("profile check: --corrections is for a meter; %s is a supply", resource_in);
		return HB_EXIT_USAGE;
	}
	if (opt.energise)
		printf("energising: up to %g A at most %g V, ramped at %g A/s, then ramped down and switched off\n",
		       opt.current_a, opt.voltage_limit_v, opt.ramp_rate);
	hb_pcheck_report *r = calloc(1, sizeof *r);
	if (!r) {
		hb_cli_error("out of memory");
		return HB_EXIT_RUNTIME;
	}
	hb_sweep_install_signals();
	hb_sweep_clear_signal();
	rc = hb_pcheck_run(&opt, kind, r);
	hb_sweep_restore_signals();
	int exit_code = HB_EXIT_OK;
	if (rc != HB_OK) {
		hb_cli_error("profile check: %s", r->message[0] ? r->message : hb_status_name(rc));
		exit_code = HB_EXIT_RUNTIME;
	} else {
		print_report(resource_in, r);
		if (r->fails > 0)
			exit_code = HB_EXIT_RUNTIME;
	}
	if (r->current_may_flow)
		hb_cli_error("profile check: the shut-down did not confirm the supply off: current may still flow; "
			     "check the supply before touching the part");
	if (fflush(stdout) != 0) {
		hb_cli_error("profile check: cannot write to standard output");
		exit_code = HB_EXIT_RUNTIME;
	}
	free(r);
	return exit_code;
}

/* ---------------- profile new ---------------- */

/* An extended regular expression matching text exactly. */
static void regex_literal(char *out, size_t cap, const char *text)
{
	size_t n = 0;
	if (cap < 4)
		return;
	out[n++] = '^';
	for (const char *p = text; *p && n + 3 < cap; p++) {
		if (strchr("\\^$.|?*+()[]{}", *p))
			out[n++] = '\\';
		out[n++] = *p;
	}
	out[n++] = '$';
	out[n] = '\0';
}

/* "maker-model" in lower case, letters, digits and '-' only. */
static void profile_name(char *out, size_t cap, const hb_idn *idn)
{
	size_t n = 0;
	bool dash = true;
	char both[2 * HB_IDN_FIELD_MAX + 2];
	snprintf(both, sizeof both, "%s %s", idn->maker, idn->model);
	for (const char *p = both; *p && n + 1 < cap && n < 48; p++) {
		if (isalnum((unsigned char)*p)) {
			out[n++] = (char)tolower((unsigned char)*p);
			dash = false;
		} else if (!dash) {
			out[n++] = '-';
			dash = true;
		}
	}
	while (n && out[n - 1] == '-')
		n--;
	out[n] = '\0';
	if (!n)
		snprintf(out, cap, "new-instrument");
}

/* The generic profile's text from its first operation section on. */
static char *generic_sections(hb_instrument_kind kind, char *path, size_t pcap, char *err, size_t errlen)
{
	hb_profile *p = NULL;
	if (hb_profile_find(kind == HB_KIND_LCR ? "generic-lcr" : "generic-supply", &p, err, errlen) != HB_OK)
		return NULL;
	snprintf(path, pcap, "%s", hb_profile_path(p));
	hb_profile_free(p);
	FILE *f = fopen(path, "r");
	if (!f) {
		snprintf(err, errlen, "cannot read %s: %s", path, strerror(errno));
		return NULL;
	}
	char *text = NULL;
	size_t len = 0;
	FILE *m = open_memstream(&text, &len);
	char line[1024];
	bool on = false;
	const char *section = kind == HB_KIND_LCR ? "[lcr]" : "[supply]";
	while (m && fgets(line, sizeof line, f)) {
		if (!on && strncmp(line, section, strlen(section)) == 0)
			on = true;
		if (on)
			fputs(line, m);
	}
	fclose(f);
	if (m)
		fclose(m);
	if (!text || !on) {
		free(text);
		snprintf(err, errlen, "%s has no %s section", path, section);
		return NULL;
	}
	return text;
}

static int profile_new(profile_args *a)
{
	if (!a->from) {
		hb_cli_error("profile new needs --from RESOURCE (the instrument it is for)");
		return HB_EXIT_USAGE;
	}
	hb_scpi *scpi = NULL;
	hb_idn idn;
	memset(&idn, 0, sizeof idn);
	int rc = hb_scpi_open(a->from, &scpi);
	if (rc == HB_OK)
		rc = hb_scpi_idn(scpi, &idn);
	if (rc != HB_OK) {
		hb_cli_error("profile new: %s: %s", a->from, hb_scpi_errmsg(scpi));
		hb_scpi_close(scpi);
		return rc == HB_ERR_ARG ? HB_EXIT_USAGE : HB_EXIT_RUNTIME;
	}
	hb_scpi_close(scpi);
	hb_instrument_kind kind;
	char err[700];
	if (a->kind >= 0) {
		kind = a->kind == 0 ? HB_KIND_LCR : HB_KIND_SUPPLY;
	} else if (hb_pcheck_kind(a->from, &kind, &idn, err, sizeof err) != HB_OK) {
		hb_cli_error("profile new: %s answers '%s' and no profile tells its kind: add --kind lcr|supply", a->from,
			     idn.raw);
		return HB_EXIT_USAGE;
	}
	char name[64], generic[512];
	profile_name(name, sizeof name, &idn);
	char *body = generic_sections(kind, generic, sizeof generic, err, sizeof err);
	if (!body) {
		hb_cli_error("profile new: %s", err);
		return HB_EXIT_RUNTIME;
	}
	char path[600];
	if (a->out)
		snprintf(path, sizeof path, "%s", a->out);
	else
		snprintf(path, sizeof path, "%s.ini", name);
	FILE *f = stdout;
	if (strcmp(path, "-") != 0) {
		/* O_EXCL: an existing profile is never overwritten. */
		int fd = open(path, O_WRONLY | O_CREAT | O_EXCL, 0644);
		if (fd < 0) {
			hb_cli_error("profile new: %s: %s%s", path, strerror(errno),
				     errno == EEXIST ? " (not overwritten: give another --out)" : "");
			free(body);
			return errno == EEXIST ? HB_EXIT_USAGE : HB_EXIT_RUNTIME;
		}
		f = fdopen(fd, "w");
		if (!f) {
			close(fd);
			free(body);
			hb_cli_error("profile new: %s: %s", path, strerror(errno));
			return HB_EXIT_RUNTIME;
		}
	}
	char maker_re[2 * HB_IDN_FIELD_MAX + 3], model_re[2 * HB_IDN_FIELD_MAX + 3];
	regex_literal(maker_re, sizeof maker_re, idn.maker);
	regex_literal(model_re, sizeof model_re, idn.model);
	char date[32];
	time_t now = time(NULL);
	struct tm tm;
	strftime(date, sizeof date, "%Y-%m-%d", gmtime_r(&now, &tm));
	fprintf(f,
		"# %s - dialect profile started by 'henrybench profile new' on %s\n"
		"#\n"
		"# From the *IDN? reply of %s: %s\n"
		"# Every operation below is copied from %s: replace each with the\n"
		"# command the instrument's programming manual gives, then try them one by one with\n"
		"#   henrybench profile check %s --profile %s\n"
		"# (docs/profiles.md: every key, and the worked bring-up).\n\n"
		"[profile]\n"
		"name = %s\n"
		"kind = %s\n"
		"description = %s %s (started from its *IDN? reply; not yet checked)\n"
		"; Above the generic profiles, so this one is chosen for this instrument.\n"
		"priority = 10\n"
		"match.maker = %s\n"
		"match.model = %s\n"
		"check.errors = yes\n\n%s",
		strcmp(path, "-") == 0 ? name : path, date, a->from, idn.raw, generic, a->from,
		strcmp(path, "-") == 0 ? "FILE" : path, name, kind == HB_KIND_LCR ? "lcr" : "supply", idn.maker, idn.model,
		maker_re, model_re, body);
	free(body);
	int bad = ferror(f);
	if (f != stdout)
		bad |= fclose(f) != 0;
	else
		bad |= fflush(stdout) != 0;
	if (bad) {
		hb_cli_error("profile new: cannot write %s", path);
		return HB_EXIT_RUNTIME;
	}
	if (f != stdout)
		fprintf(stderr, "henrybench: profile new: wrote %s (%s, matching maker '%s' model '%s'); next: henrybench "
				"profile check %s --profile %s\n",
			path, kind == HB_KIND_LCR ? "lcr" : "supply", idn.maker, idn.model, a->from, path);
	return HB_EXIT_OK;
}

int hb_cmd_profile(int argc, char **argv)
{
	profile_args a = { .kind = -1, .max_current = NAN, .max_voltage = NAN };
	hb_opts_result r;
	if (hb_opts_parse(&hb_opts_profile, argc, argv, &a, &r) != HB_OK)
		return HB_EXIT_USAGE;
	if (r.done)
		return HB_EXIT_OK;
	const char *sub = r.first < argc ? argv[r.first] : NULL;
	if (sub && strcmp(sub, "check") == 0) {
		if (r.first + 2 != argc) {
			hb_cli_error("profile check needs one RESOURCE, e.g. sim:lcr or tcp://192.0.2.10:5025");
			return HB_EXIT_USAGE;
		}
		return profile_check(&a, argv[r.first + 1]);
	}
	if (sub && strcmp(sub, "new") == 0) {
		if (r.first + 1 != argc) {
			hb_cli_error("profile new takes no operand: the instrument is --from RESOURCE");
			return HB_EXIT_USAGE;
		}
		return profile_new(&a);
	}
	hb_cli_error("profile: %s (accepted: check, new; try 'henrybench profile --help')",
		     sub ? "unknown subcommand" : "needs a subcommand");
	return HB_EXIT_USAGE;
}
