/* src/cli/opt_table.c - one option table per command: parsing, range checks, --help and bash completion from it */
#include <errno.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"

/* Every command takes --help / -h; it is not repeated in the tables so no
 * table can forget it, but help and completion list it like any other. */
static const hb_opt help_opt = { .name = "help", .alias = 'h', .kind = HB_OPT_FLAG, .help = "this text" };

/* The words an option offers: its own list or the one known at run time. */
static const char *const *words_of(const hb_opt *o)
{
	return o->words ? o->words : o->words_fn ? o->words_fn() : NULL;
}

static void *field_at(void *out, size_t off)
{
	return (char *)out + off;
}

/* "a, b or c" */
static void words_text(char *buf, size_t cap, const char *const *words, const char *sep, const char *last)
{
	size_t n = 0, len = 0;
	while (words && words[n])
		n++;
	buf[0] = '\0';
	for (size_t i = 0; i < n && len < cap; i++) {
		const char *join = i == 0 ? "" : i + 1 == n ? last : sep;
		int w = snprintf(buf + len, cap - len, "%s%s", join, words[i]);
		if (w < 0)
			break;
		len += (size_t)w;
	}
}

static int parse_enum(const hb_opt *o, const char *text, void *field)
{
	int code = -1;
	bool ok = false;
	if (o->match) {
		ok = o->match(text, &code) == HB_OK;
	} else {
		for (int i = 0; words_of(o)[i]; i++) {
			if (strcmp(text, words_of(o)[i]) == 0) {
				code = o->codes ? o->codes[i] : i;
				ok = true;
				break;
			}
		}
	}
	if (!ok) {
		char list[256];
		words_text(list, sizeof list, words_of(o), ", ", " or ");
		hb_cli_error("--%s '%s': accepted %s", o->name, text, list);
		return HB_ERR_ARG;
	}
	*(int *)field = code;
	return HB_OK;
}

static int parse_id(const hb_opt *o, const char *text, void *field)
{
	char *end = NULL;
	errno = 0;
	long long v = strtoll(text, &end, 10);
	if (errno || end == text || *end || v <= 0) {
		hb_cli_error("--%s '%s' is not a record id: accepted a whole number from 1", o->name, text);
		return HB_ERR_ARG;
	}
	*(long long *)field = v;
	return HB_OK;
}

/* The text options that name a stored field: their name in messages and
 * their stated limit (docs/hostile-input.md). Every other text option is
 * still checked as one line of UTF-8 without control characters. */
static const struct {
	const char *option, *field;
	size_t limit;
} text_fields[] = {
	{ "part", "part number", HB_TEXT_ID_MAX },
	{ "unit", "serial", HB_TEXT_ID_MAX },
	{ "first-serial", "serial", HB_TEXT_ID_MAX },
	{ "lot", "lot code", HB_TEXT_ID_MAX },
	{ "note", "note", HB_TEXT_NOTE_MAX },
};

static int check_text(const hb_opt *o, const char *option, const char *text)
{
	const char *field = option;
	size_t limit = 0;
	for (size_t i = 0; i < sizeof text_fields / sizeof text_fields[0]; i++) {
		if (strcmp(o->name, text_fields[i].option) == 0) {
			field = text_fields[i].field;
			limit = text_fields[i].limit;
		}
	}
	char label[120], err[240];
	if (field == option)
		snprintf(label, sizeof label, "%s", option);
	else
		snprintf(label, sizeof label, "%s (%s)", field, option);
	if (hb_text_check(label, text, limit, err, sizeof err) != HB_OK) {
		hb_cli_error("%s", err);
		return HB_ERR_ARG;
	}
	return HB_OK;
}

/* Parses one option's argument into out. */
static int take(const hb_opt *o, const char *text, void *out)
{
	char option[80];
	snprintf(option, sizeof option, "--%s", o->name);
	void *field = field_at(out, o->off);
	long n = 0;
	int rc = HB_OK;
	switch (o->kind) {
	case HB_OPT_FLAG:
		*(bool *)field = true;
		break;
	case HB_OPT_TEXT:
		rc = check_text(o, option, text);
		if (rc == HB_OK)
			*(const char **)field = text;
		break;
	case HB_OPT_PATH:
		*(const char **)field = text;
		break;
	case HB_OPT_VALUE:
		rc = hb_opt_value(option, text, o->unit, o->min, o->max, (double *)field);
		break;
	case HB_OPT_INT:
	case HB_OPT_LONG:
		rc = hb_opt_int(option, text, (long)o->min, (long)o->max, &n);
		if (rc == HB_OK && o->kind == HB_OPT_INT)
			*(int *)field = (int)n;
		else if (rc == HB_OK)
			*(long *)field = n;
		break;
	case HB_OPT_ENUM:
		rc = parse_enum(o, text, field);
		break;
	case HB_OPT_ID:
		rc = parse_id(o, text, field);
		break;
	case HB_OPT_CUSTOM:
		rc = o->parse(o, text, field);
		break;
	}
	if (rc != HB_OK)
		return HB_ERR_ARG;
	if (o->given)
		*(bool *)field_at(out, o->given - 1) = true;
	return HB_OK;
}

/* The option named by the long name (exact, else a unique prefix, as
 * getopt_long accepts); NULL after the one-line error. */
static const hb_opt *find_long(const hb_cmd_opts *cmd, const char *name, size_t len, const char *word)
{
	const hb_opt *prefix = NULL;
	int n_prefix = 0;
	for (const hb_opt *o = cmd->opts;; o++) {
		if (!o->name)
			o = &help_opt;
		if (strncmp(o->name, name, len) == 0) {
			if (strlen(o->name) == len)
				return o;
			prefix = o;
			n_prefix++;
		}
		if (o == &help_opt)
			break;
	}
	if (n_prefix == 1 && len > 0)
		return prefix;
	hb_cli_error("%s: %s option '%s' (try 'henrybench %s --help')", cmd->name,
		     n_prefix > 1 && len > 0 ? "ambiguous" : "unknown", word, cmd->name);
	return NULL;
}

static const hb_opt *find_short(const hb_cmd_opts *cmd, char c, const char *word)
{
	for (const hb_opt *o = cmd->opts; o->name; o++)
		if (o->alias && o->alias == c)
			return o;
	if (c == help_opt.alias)
		return &help_opt;
	hb_cli_error("%s: unknown option '-%c' in '%s' (try 'henrybench %s --help')", cmd->name, c, word, cmd->name);
	return NULL;
}

/* Acts on one option met on the line; value is its argument (NULL for a flag). */
static int apply(const hb_cmd_opts *cmd, const hb_opt *o, const char *value, void *out, hb_opts_result *res)
{
	if (o == &help_opt) {
		hb_opts_help(cmd, stdout);
		res->done = true;
		return HB_OK;
	}
	if (take(o, value, out) != HB_OK)
		return HB_ERR_ARG;
	if (o->flags & HB_OPT_STOP) {
		res->done = true;
		res->stop = o;
	}
	return HB_OK;
}

static int missing_value(const hb_cmd_opts *cmd, const hb_opt *o)
{
	hb_cli_error("%s: --%s needs a value: %s (try 'henrybench %s --help')", cmd->name, o->name,
		     o->arg ? o->arg : "VALUE", cmd->name);
	return HB_ERR_ARG;
}

int hb_opts_parse(const hb_cmd_opts *cmd, int argc, char **argv, void *out, hb_opts_result *res)
{
	res->first = argc;
	res->done = false;
	res->stop = NULL;
	/* Operands are collected here and put back after the options, so a
	 * command sees them in order wherever they stood (as getopt_long did). */
	char **operands = calloc((size_t)argc + 1, sizeof *operands);
	if (!operands) {
		hb_cli_error("%s: out of memory", cmd->name);
		return HB_ERR_NOMEM;
	}
	int n_ops = 0, n_opts = 1, rc = HB_OK;
	int i = 1;
	for (; i < argc && !res->done; i++) {
		char *a = argv[i];
		if (strcmp(a, "--") == 0) {
			/* kept among the options, so that the operands still end
			 * at argc for the command counting them */
			argv[n_opts++] = a;
			for (i++; i < argc; i++)
				operands[n_ops++] = argv[i];
			break;
		}
		if (a[0] != '-' || a[1] == '\0') {
			operands[n_ops++] = a;
			continue;
		}
		argv[n_opts++] = a;
		if (a[1] == '-') {
			const char *eq = strchr(a + 2, '=');
			size_t len = eq ? (size_t)(eq - (a + 2)) : strlen(a + 2);
			const hb_opt *o = find_long(cmd, a + 2, len, a);
			if (!o) {
				rc = HB_ERR_ARG;
				goto out;
			}
			const char *value = NULL;
			if (o->kind == HB_OPT_FLAG) {
				if (eq) {
					hb_cli_error("%s: --%s takes no value (got '%s')", cmd->name, o->name, eq + 1);
					rc = HB_ERR_ARG;
					goto out;
				}
			} else if (eq) {
				value = eq + 1;
			} else if (i + 1 < argc) {
				value = argv[++i];
				argv[n_opts++] = argv[i];
			} else {
				rc = missing_value(cmd, o);
				goto out;
			}
			if ((rc = apply(cmd, o, value, out, res)) != HB_OK)
				goto out;
			continue;
		}
		/* Short aliases, grouped ("-jh") or with their value ("-xVALUE", "-x VALUE"). */
		for (const char *c = a + 1; *c && !res->done; c++) {
			const hb_opt *o = find_short(cmd, *c, a);
			if (!o) {
				rc = HB_ERR_ARG;
				goto out;
			}
			const char *value = NULL;
			if (o->kind != HB_OPT_FLAG) {
				if (c[1]) {
					value = c + 1;
				} else if (i + 1 < argc) {
					value = argv[++i];
					argv[n_opts++] = argv[i];
				} else {
					rc = missing_value(cmd, o);
					goto out;
				}
			}
			if ((rc = apply(cmd, o, value, out, res)) != HB_OK)
				goto out;
			if (value)
				break;
		}
	}
	/* Whatever follows a STOP option is left unread, as getopt_long's callers did. */
	for (; i < argc; i++)
		argv[n_opts++] = argv[i];
	res->first = n_opts;
	for (int k = 0; k < n_ops; k++)
		argv[n_opts + k] = operands[k];
	if (!res->done && cmd->max_operands >= 0 && n_ops > cmd->max_operands) {
		hb_cli_error("%s: unexpected argument '%s' (try 'henrybench %s --help')", cmd->name,
			     operands[cmd->max_operands], cmd->name);
		rc = HB_ERR_ARG;
	}
out:
	free(operands);
	return rc;
}

char *hb_opt_range_text(char *buf, size_t cap, const char *unit, double min, double max)
{
	char lo[48], hi[48];
	const char *u = unit ? unit : "";
	if (strcmp(u, "%") == 0) {
		snprintf(lo, sizeof lo, "%g%%", min * 100);
		snprintf(hi, sizeof hi, "%g%%", max * 100);
	} else {
		hb_format_si(lo, sizeof lo, min, u, 4);
		hb_format_si(hi, sizeof hi, max, u, 4);
		/* A unitless value keeps the space hb_format_si puts before the unit. */
		for (char *t = lo + strlen(lo); t > lo && t[-1] == ' '; t--)
			t[-1] = '\0';
		for (char *t = hi + strlen(hi); t > hi && t[-1] == ' '; t--)
			t[-1] = '\0';
	}
	if (isinf(min) && isinf(max))
		snprintf(buf, cap, "any value");
	else if (isinf(min))
		snprintf(buf, cap, "up to %s", hi);
	else if (isinf(max))
		snprintf(buf, cap, "from %s", lo);
	else
		snprintf(buf, cap, "%s to %s", lo, hi);
	return buf;
}

/* The left column of an option's help line: "-j, --json", "--steps N". */
static void option_head(char *buf, size_t cap, const hb_opt *o)
{
	char arg[200] = "";
	if (o->kind != HB_OPT_FLAG) {
		if (o->arg)
			snprintf(arg, sizeof arg, " %s", o->arg);
		else if (words_of(o)) {
			char list[190];
			words_text(list, sizeof list, words_of(o), "|", "|");
			snprintf(arg, sizeof arg, " %s", list);
		} else
			snprintf(arg, sizeof arg, " VALUE");
	}
	if (o->alias)
		snprintf(buf, cap, "-%c, --%s%s", o->alias, o->name, arg);
	else
		snprintf(buf, cap, "--%s%s", o->name, arg);
}

static void option_line(FILE *out, const hb_opt *o)
{
	char head[240], range[128] = "";
	option_head(head, sizeof head, o);
	switch (o->kind) {
	case HB_OPT_VALUE: {
		char r[100];
		snprintf(range, sizeof range, "; %s", hb_opt_range_text(r, sizeof r, o->unit, o->min, o->max));
		break;
	}
	case HB_OPT_INT:
	case HB_OPT_LONG:
		snprintf(range, sizeof range, "; %ld to %ld", (long)o->min, (long)o->max);
		break;
	default:
		/* A named argument hides the words in the left column: list them here. */
		if (o->arg && !strchr(o->arg, '|') && words_of(o)) {
			char list[100];
			words_text(list, sizeof list, words_of(o), ", ", " or ");
			snprintf(range, sizeof range, "; %s", list);
		}
		break;
	}
	if (strlen(head) > 22)
		fprintf(out, "  %s\n  %-22s %s%s%s\n", head, "", o->help ? o->help : "", range,
			o->flags & HB_OPT_REPEAT ? " (repeatable)" : "");
	else
		fprintf(out, "  %-22s %s%s%s\n", head, o->help ? o->help : "", range,
			o->flags & HB_OPT_REPEAT ? " (repeatable)" : "");
}

void hb_opts_help(const hb_cmd_opts *cmd, FILE *out)
{
	fprintf(out, "usage: henrybench %s %s\n", cmd->name, cmd->usage ? cmd->usage : "[options]");
	if (cmd->about)
		fprintf(out, "%s", cmd->about);
	fprintf(out, "\noptions:\n");
	for (const hb_opt *o = cmd->opts; o->name; o++)
		option_line(out, o);
	option_line(out, &help_opt);
	if (cmd->epilog)
		fprintf(out, "\n%s", cmd->epilog);
}

/* ---------------- bash completion ---------------- */

static void completion_words(FILE *out, const hb_opt *o)
{
	const char *const *w = words_of(o);
	for (int k = 0; w[k]; k++)
		fprintf(out, "%s%s", k ? " " : "", w[k]);
}

static void completion_command(FILE *out, const hb_cmd_opts *cmd)
{
	fprintf(out, "\t%s)\n\t\tcase $prev in\n", cmd->name);
	for (const hb_opt *o = cmd->opts; o->name; o++) {
		if (o->kind == HB_OPT_FLAG)
			continue;
		fprintf(out, "\t\t--%s)", o->name);
		if (words_of(o)) {
			fprintf(out, " COMPREPLY=($(compgen -W \"");
			completion_words(out, o);
			fprintf(out, "\" -- \"$cur\")); return ;;\n");
		} else if (o->kind == HB_OPT_PATH) {
			fprintf(out, " COMPREPLY=($(compgen -f -- \"$cur\")); return ;;\n");
		} else {
			fprintf(out, " return ;;\n");
		}
	}
	fprintf(out, "\t\tesac\n\t\topts=\"");
	for (const hb_opt *o = cmd->opts; o->name; o++)
		fprintf(out, "--%s ", o->name);
	fprintf(out, "--%s\"\n", help_opt.name);
	if (cmd->operands)
		fprintf(out, "\t\twords=\"%s\"\n", cmd->operands);
	fprintf(out, "\t\t;;\n");
}

void hb_opts_completion_bash(FILE *out)
{
	fprintf(out,
		"# bash completion for henrybench, generated from its option tables by 'henrybench completion bash'\n"
		"# use: eval \"$(henrybench completion bash)\" or save it in your bash-completion directory\n"
		"_henrybench()\n"
		"{\n"
		"\tlocal cur=${COMP_WORDS[COMP_CWORD]} prev=${COMP_WORDS[COMP_CWORD-1]}\n"
		"\tlocal cmd= opts= words= nops=0 i\n"
		"\tfor ((i = 1; i < COMP_CWORD; i++)); do\n"
		"\t\tcase ${COMP_WORDS[i]} in\n"
		"\t\t--db) ((i++)) ;;\n"
		"\t\t-*) ;;\n"
		"\t\t*) if [ -z \"$cmd\" ]; then cmd=${COMP_WORDS[i]}; else ((nops++)); fi ;;\n"
		"\t\tesac\n"
		"\tdone\n"
		"\tcase $prev in\n"
		"\t--db) COMPREPLY=($(compgen -f -- \"$cur\")); return ;;\n"
		"\tesac\n"
		"\tcase $cmd in\n"
		"\t'')\n"
		"\t\topts=\"");
	for (const hb_command *c = hb_commands; c->name; c++)
		fprintf(out, "%s ", c->name);
	fprintf(out, "--db --trace --help --version\"\n\t\t;;\n");
	for (const hb_command *c = hb_commands; c->name; c++)
		if (c->opts)
			completion_command(out, c->opts);
	fprintf(out,
		"\tesac\n"
		"\t[ -n \"$cmd\" ] && opts=\"$opts --db --trace\"\n"
		"\t# the first operand (a subcommand, a shape) before any option\n"
		"\t[ -n \"$words\" ] && [ \"$nops\" -eq 0 ] && [[ $cur != -* ]] && opts=$words\n"
		"\tCOMPREPLY=($(compgen -W \"$opts\" -- \"$cur\"))\n"
		"}\n"
		"complete -F _henrybench henrybench\n");
}

/* ---------------- an option described for the man page and zsh (opt_docs.c) ---------------- */

void hb_opt_describe(const hb_opt *o, char *head, size_t hcap, char *range, size_t rcap)
{
	char r[160] = "";
	option_head(head, hcap, o);
	switch (o->kind) {
	case HB_OPT_VALUE: {
		char t[100];
		snprintf(r, sizeof r, "%s", hb_opt_range_text(t, sizeof t, o->unit, o->min, o->max));
		break;
	}
	case HB_OPT_INT:
	case HB_OPT_LONG:
		snprintf(r, sizeof r, "%ld to %ld", (long)o->min, (long)o->max);
		break;
	default:
		if (words_of(o)) {
			char list[140];
			words_text(list, sizeof list, words_of(o), ", ", " or ");
			snprintf(r, sizeof r, "%s", list);
		}
		break;
	}
	snprintf(range, rcap, "%s", r);
}

const char *const *hb_opt_words(const hb_opt *o)
{
	return words_of(o);
}

const hb_opt *hb_opt_help_entry(void)
{
	return &help_opt;
}
