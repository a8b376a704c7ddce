/* tests/test_cli_options.c - the option tables: unknown options, range and word errors, --help and completion generated from them */
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/wait.h>
#include <unistd.h>

#include <cmocka.h>

#include "src/cli/cli.h"

static const char *hb_bin = "./henrybench";
static char tmpdir[64];

/* What a run of the binary left. */
typedef struct run_result {
	int rc;
	char out[65536];
	char err[4096];
} run_result;

static void slurp(const char *path, char *buf, size_t cap)
{
	FILE *f = fopen(path, "r");
	assert_non_null(f);
	size_t n = fread(buf, 1, cap - 1, f);
	buf[n] = '\0';
	fclose(f);
}

/* Runs henrybench with args (NULL-terminated), stdout and stderr caught;
 * the store is a fresh temporary file, never the user's. */
static void run_bin(run_result *r, const char *const *args)
{
	char out_path[128], err_path[128], db[128];
	snprintf(out_path, sizeof out_path, "%s/out", tmpdir);
	snprintf(err_path, sizeof err_path, "%s/err", tmpdir);
	snprintf(db, sizeof db, "%s/bench.db", tmpdir);
	char *argv[16];
	int n = 0;
	argv[n++] = (char *)hb_bin;
	for (; args[n - 1] && n < 15; n++)
		argv[n] = (char *)args[n - 1];
	argv[n] = NULL;
	pid_t pid = fork();
	assert_true(pid >= 0);
	if (pid == 0) {
		FILE *o = freopen(out_path, "w", stdout);
		FILE *e = freopen(err_path, "w", stderr);
		if (!o || !e)
			_exit(99);
		setenv("HENRYBENCH_DB", db, 1);
		execv(hb_bin, argv);
		_exit(98);
	}
	int status = 0;
	assert_int_equal(waitpid(pid, &status, 0), pid);
	assert_true(WIFEXITED(status));
	r->rc = WEXITSTATUS(status);
	slurp(out_path, r->out, sizeof r->out);
	slurp(err_path, r->err, sizeof r->err);
}

static int count_lines(const char *s)
{
	int n = 0;
	for (; *s; s++)
		n += *s == '\n';
	return n;
}

/* Room for any command's option struct; the offsets of every table must fit. */
typedef union scratch {
	max_align_t align;
	char bytes[1 << 16];
} scratch;

/* Runs the parser of cmd in-process on args with stderr caught in err. */
static int parse_caught(const hb_cmd_opts *cmd, scratch *s, const char *const *args, char *err, size_t cap)
{
	char *argv[8];
	int argc = 0;
	argv[argc++] = (char *)cmd->name;
	for (; args[argc - 1]; argc++)
		argv[argc] = (char *)args[argc - 1];
	argv[argc] = NULL;
	memset(s, 0, sizeof *s);
	FILE *tmp = tmpfile();
	assert_non_null(tmp);
	fflush(stderr);
	int saved = dup(STDERR_FILENO);
	dup2(fileno(tmp), STDERR_FILENO);
	hb_opts_result res;
	int rc = hb_opts_parse(cmd, argc, argv, s, &res);
	fflush(stderr);
	dup2(saved, STDERR_FILENO);
	close(saved);
	rewind(tmp);
	size_t n = fread(err, 1, cap - 1, tmp);
	err[n] = '\0';
	fclose(tmp);
	return rc;
}

/* The option's help line of text: "--name" followed by its argument or the end of the head. */
static const char *option_in(const char *text, const char *name)
{
	char needle[80];
	snprintf(needle, sizeof needle, "--%s", name);
	for (const char *p = strstr(text, needle); p; p = strstr(p + 1, needle)) {
		char after = p[strlen(needle)];
		bool starts_head = p >= text + 2 && (p[-1] == ' ' || p[-1] == '"');
		if (starts_head && (after == ' ' || after == '\n' || after == '"'))
			return p;
	}
	return NULL;
}

/* Any option of any command, unknown: exit 2 and one line naming it. */
static void test_unknown_option_exits_2_with_one_line(void **state)
{
	(void)state;
	for (const hb_command *c = hb_commands; c->name; c++) {
		assert_non_null(c->opts);
		char operand[32] = "";
		if (c->opts->operands)
			sscanf(c->opts->operands, "%31s", operand);
		const char *args[] = { c->name, operand[0] ? operand : "--no-such-option", "--no-such-option", NULL };
		if (!operand[0])
			args[2] = NULL;
		run_result r;
		run_bin(&r, args);
		if (r.rc != HB_EXIT_USAGE || count_lines(r.err) != 1 || !strstr(r.err, "'--no-such-option'"))
			fail_msg("%s --no-such-option: exit %d, stderr '%s'", c->name, r.rc, r.err);
		assert_string_equal(r.out, "");
	}
	/* in process too: the parser refuses it before the command acts */
	scratch s;
	char err[512];
	const char *const bad[] = { "--to", "1A", "--bogus", NULL };
	assert_int_equal(parse_caught(&hb_opts_sweep, &s, bad, err, sizeof err), HB_ERR_ARG);
	assert_non_null(strstr(err, "sweep: unknown option '--bogus'"));
	/* a value missing at the end is refused the same way */
	const char *const missing[] = { "--to", NULL };
	assert_int_equal(parse_caught(&hb_opts_sweep, &s, missing, err, sizeof err), HB_ERR_ARG);
	assert_non_null(strstr(err, "--to needs a value"));
}

/* Every ranged option of every table: a value above its range is refused
 * with one line naming the option, the value and the range from the table;
 * the lowest accepted value is stored where the table says. */
static void test_out_of_range_names_value_and_range(void **state)
{
	(void)state;
	scratch s;
	char err[512], want[256], range[128], text[64];
	int checked = 0;
	for (const hb_command *c = hb_commands; c->name; c++) {
		for (const hb_opt *o = c->opts->opts; o->name; o++) {
			if (o->kind != HB_OPT_VALUE && o->kind != HB_OPT_INT && o->kind != HB_OPT_LONG)
				continue;
			assert_true(o->off + sizeof(double) <= sizeof s.bytes);
			char option[64];
			snprintf(option, sizeof option, "--%s", o->name);
			if (o->kind == HB_OPT_VALUE) {
				snprintf(text, sizeof text, "1e30");
				hb_opt_range_text(range, sizeof range, o->unit, o->min, o->max);
			} else {
				snprintf(text, sizeof text, "%ld", (long)o->max + 1);
				snprintf(range, sizeof range, "%ld to %ld", (long)o->min, (long)o->max);
			}
			const char *const high[] = { option, text, NULL };
			if (parse_caught(c->opts, &s, high, err, sizeof err) != HB_ERR_ARG)
				fail_msg("%s %s %s accepted", c->name, option, text);
			snprintf(want, sizeof want, "henrybench: %s %s is out of range: accepted %s\n", option, text, range);
			if (strcmp(err, want) != 0)
				fail_msg("%s %s %s: '%s', expected '%s'", c->name, option, text, err, want);
			if (o->kind != HB_OPT_VALUE) {
				snprintf(text, sizeof text, "%ld", (long)o->min);
				const char *const low[] = { option, text, NULL };
				assert_int_equal(parse_caught(c->opts, &s, low, err, sizeof err), HB_OK);
				long got = o->kind == HB_OPT_INT ? *(int *)(s.bytes + o->off) : *(long *)(s.bytes + o->off);
				assert_int_equal(got, (long)o->min);
				if (o->given)
					assert_true(s.bytes[o->given - 1]);
			}
			checked++;
		}
	}
	assert_true(checked > 40);

	/* the binary, as an operator sees it */
	run_result r;
	const char *const args[] = { "sweep", "--steps", "0", NULL };
	run_bin(&r, args);
	assert_int_equal(r.rc, HB_EXIT_USAGE);
	assert_string_equal(r.err, "henrybench: --steps 0 is out of range: accepted 2 to 10000\n");
}

/* Every word option: a word not accepted is refused with one line listing
 * every accepted word; each accepted word is taken. */
static void test_enum_lists_accepted_words(void **state)
{
	(void)state;
	scratch s;
	char err[512], refusal[512];
	int checked = 0;
	for (const hb_command *c = hb_commands; c->name; c++) {
		for (const hb_opt *o = c->opts->opts; o->name; o++) {
			if (o->kind != HB_OPT_ENUM)
				continue;
			assert_non_null(o->words);
			char option[64];
			snprintf(option, sizeof option, "--%s", o->name);
			const char *const bad[] = { option, "no-such-word", NULL };
			assert_int_equal(parse_caught(c->opts, &s, bad, refusal, sizeof refusal), HB_ERR_ARG);
			assert_int_equal(count_lines(refusal), 1);
			assert_non_null(strstr(refusal, option));
			assert_non_null(strstr(refusal, "'no-such-word'"));
			for (int k = 0; o->words[k]; k++) {
				char quoted[64];
				snprintf(quoted, sizeof quoted, " %s", o->words[k]);
				if (!strstr(refusal, quoted))
					fail_msg("%s %s: '%s' does not list '%s'", c->name, option, refusal, o->words[k]);
				const char *const good[] = { option, o->words[k], NULL };
				if (parse_caught(c->opts, &s, good, err, sizeof err) != HB_OK)
					fail_msg("%s %s %s refused: %s", c->name, option, o->words[k], err);
				if (!o->match)
					assert_int_equal(*(int *)(s.bytes + o->off), o->codes ? o->codes[k] : k);
			}
			checked++;
		}
	}
	assert_true(checked >= 10);
}

/* henrybench CMD --help lists every option of CMD's table (with its range
 * or words), as the table says, not as a copy of the text. */
static void test_help_lists_every_option(void **state)
{
	(void)state;
	static run_result r;
	for (const hb_command *c = hb_commands; c->name; c++) {
		const char *const args[] = { c->name, "--help", NULL };
		run_bin(&r, args);
		if (r.rc != HB_EXIT_OK)
			fail_msg("%s --help: exit %d (%s)", c->name, r.rc, r.err);
		char usage[64];
		snprintf(usage, sizeof usage, "usage: henrybench %s ", c->name);
		assert_non_null(strstr(r.out, usage));
		/* the option list, not the usage lines, must name each */
		const char *list = strstr(r.out, "\noptions:\n");
		assert_non_null(list);
		assert_non_null(option_in(list, "help"));
		for (const hb_opt *o = c->opts->opts; o->name; o++) {
			const char *at = option_in(list, o->name);
			if (!at)
				fail_msg("%s --help does not list --%s", c->name, o->name);
			const char *eol = strchr(at, '\n');
			const char *next = eol ? strchr(eol + 1, '\n') : NULL;
			size_t len = (size_t)((next ? next : at + strlen(at)) - at);
			char line[512];
			snprintf(line, sizeof line, "%.*s", (int)(len < sizeof line ? len : sizeof line - 1), at);
			if (o->kind == HB_OPT_VALUE) {
				char range[128];
				hb_opt_range_text(range, sizeof range, o->unit, o->min, o->max);
				if (!strstr(line, range))
					fail_msg("%s --help: --%s without its range '%s': %s", c->name, o->name, range, line);
			}
			if (o->kind == HB_OPT_ENUM)
				for (int k = 0; o->words[k]; k++)
					if (!strstr(line, o->words[k]))
						fail_msg("%s --help: --%s without '%s': %s", c->name, o->name, o->words[k], line);
			if (o->help && !strstr(line, o->help))
				fail_msg("%s --help: --%s without its help text: %s", c->name, o->name, line);
		}
	}
}

/* The completion script names every command and every option of each, and
 * bash completes from it. */
static void test_completion_lists_every_command_and_option(void **state)
{
	(void)state;
	static run_result r;
	const char *const args[] = { "completion", "bash", NULL };
	run_bin(&r, args);
	assert_int_equal(r.rc, HB_EXIT_OK);
	assert_non_null(strstr(r.out, "complete -F _henrybench henrybench"));
	const char *top = strstr(r.out, "\t'')\n");
	assert_non_null(top);
	for (const hb_command *c = hb_commands; c->name; c++) {
		char head[64];
		snprintf(head, sizeof head, "\n\t%s)\n", c->name);
		const char *block = strstr(r.out, head);
		if (!block)
			fail_msg("completion: no block for %s", c->name);
		const char *end = strstr(block, "\t\t;;\n");
		assert_non_null(end);
		char *text = strndup(block, (size_t)(end - block));
		assert_non_null(text);
		for (const hb_opt *o = c->opts->opts; o->name; o++) {
			if (!option_in(text, o->name))
				fail_msg("completion of %s lacks --%s", c->name, o->name);
			if (o->kind == HB_OPT_ENUM)
				for (int k = 0; o->words[k]; k++)
					if (!strstr(text, o->words[k]))
						fail_msg("completion of %s --%s lacks '%s'", c->name, o->name, o->words[k]);
		}
		free(text);
		/* the command is offered where the command goes */
		char word[64];
		snprintf(word, sizeof word, " %s ", c->name);
		const char *list = strstr(top, "opts=\"");
		assert_non_null(list);
		char *line = strndup(list + 5, (size_t)(strchr(list, '\n') - list - 5));
		line[0] = ' ';
		if (!strstr(line, word))
			fail_msg("completion: command %s not offered", c->name);
		free(line);
	}

	/* and bash completes from it */
	if (access("/bin/bash", X_OK) != 0) {
		skip();
		return;
	}
	char script[128], cmd[512], got[512];
	snprintf(script, sizeof script, "%s/completion.bash", tmpdir);
	FILE *f = fopen(script, "w");
	assert_non_null(f);
	fputs(r.out, f);
	fclose(f);
	static const struct { const char *line; int cword; const char *want; } cases[] = {
		{ "henrybench sweep --aper", 2, "--aperture" },
		{ "henrybench sweep --aperture ''", 3, "short medium long" },
		{ "henrybench --db x.db inspect --severity t", 5, "tightened" },
		{ "henrybench part ''", 2, "add list show edit delete" },
		{ "henrybench compl", 1, "completion" },
	};
	for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
		snprintf(cmd, sizeof cmd,
			 "bash -c 'source %s; COMP_WORDS=(%s); COMP_CWORD=%d; _henrybench; echo \"${COMPREPLY[*]}\"' 2>&1",
			 script, cases[i].line, cases[i].cword);
		/* the quotes of an empty word are for bash, not for the outer shell */
		for (char *q = strstr(cmd, "''"); q; q = strstr(q, "''"))
			memcpy(q, "\"\"", 2);
		FILE *p = popen(cmd, "r");
		assert_non_null(p);
		size_t n = fread(got, 1, sizeof got - 1, p);
		got[n] = '\0';
		pclose(p);
		if (n && got[n - 1] == '\n')
			got[n - 1] = '\0';
		if (strcmp(got, cases[i].want) != 0)
			fail_msg("completing '%s': '%s', expected '%s'", cases[i].line, got, cases[i].want);
	}
}

/* A table of every kind, for the parser's own rules. */
typedef struct probe {
	bool flag, json, value_given, stopped;
	double value;
	long long id;
	const char *path;
	const char *seen[4];
	int n_seen;
} probe;

static int take_seen(const hb_opt *o, const char *text, void *field)
{
	probe *p = field;
	(void)o;
	if (p->n_seen >= 4)
		return HB_ERR_ARG;
	p->seen[p->n_seen++] = text;
	return HB_OK;
}

static const hb_opt probe_table[] = {
	{ .name = "flag", .kind = HB_OPT_FLAG, .off = offsetof(probe, flag), .help = "a flag" },
	{ .name = "json", .alias = 'j', .kind = HB_OPT_FLAG, .off = offsetof(probe, json), .help = "a short alias" },
	{ .name = "value", .kind = HB_OPT_VALUE, .arg = "A", .unit = "A", .min = 0, .max = 10,
	  .off = offsetof(probe, value), .given = HB_OPT_GIVEN(probe, value_given), .help = "a value" },
	{ .name = "valve", .kind = HB_OPT_FLAG, .off = offsetof(probe, flag), .help = "shares a prefix with --value" },
	{ .name = "id", .kind = HB_OPT_ID, .arg = "ID", .off = offsetof(probe, id), .help = "a record id" },
	{ .name = "out", .kind = HB_OPT_PATH, .arg = "FILE", .off = offsetof(probe, path), .help = "a path" },
	{ .name = "seen", .kind = HB_OPT_CUSTOM, .arg = "X", .parse = take_seen, .off = 0, .flags = HB_OPT_REPEAT,
	  .help = "repeatable" },
	{ .name = "list", .kind = HB_OPT_FLAG, .off = offsetof(probe, stopped), .flags = HB_OPT_STOP, .help = "stops" },
	{ .name = NULL },
};

static const hb_cmd_opts probe_cmd = { .name = "probe", .opts = probe_table, .max_operands = 2 };

static int probe_parse(probe *p, hb_opts_result *res, char **argv, int argc, char *err, size_t cap)
{
	memset(p, 0, sizeof *p);
	FILE *tmp = tmpfile();
	assert_non_null(tmp);
	fflush(stderr);
	int saved = dup(STDERR_FILENO);
	dup2(fileno(tmp), STDERR_FILENO);
	int rc = hb_opts_parse(&probe_cmd, argc, argv, p, res);
	fflush(stderr);
	dup2(saved, STDERR_FILENO);
	close(saved);
	rewind(tmp);
	size_t n = fread(err, 1, cap - 1, tmp);
	err[n] = '\0';
	fclose(tmp);
	return rc;
}

/* The parser's rules: --name VALUE and --name=VALUE, unique prefixes,
 * grouped short aliases, operands anywhere (kept in order), "--",
 * repeatable options, record ids, STOP options, too many operands. */
static void test_parser_rules(void **state)
{
	(void)state;
	probe p;
	hb_opts_result res;
	char err[512];
	char *a1[] = { "probe", "op1", "--valu=2.5A", "-j", "--seen", "x", "op2", "--seen=y", "--id", "42", "--out", "f.txt", NULL };
	assert_int_equal(probe_parse(&p, &res, a1, 12, err, sizeof err), HB_OK);
	assert_string_equal(err, "");
	assert_false(res.done);
	assert_true(p.json && p.value_given);
	assert_true(fabs(p.value - 2.5) < 1e-12);
	assert_int_equal(p.id, 42);
	assert_string_equal(p.path, "f.txt");
	assert_int_equal(p.n_seen, 2);
	assert_string_equal(p.seen[0], "x");
	assert_string_equal(p.seen[1], "y");
	assert_int_equal(res.first, 10);
	assert_string_equal(a1[10], "op1");
	assert_string_equal(a1[11], "op2");

	/* "--" ends the options; what follows is an operand even if it looks like
	 * one. The "--" stays among the options, so the operands run from first
	 * to argc: a command counting argc - first sees exactly one. */
	char *a2[] = { "probe", "--flag", "--", "--value", NULL };
	assert_int_equal(probe_parse(&p, &res, a2, 4, err, sizeof err), HB_OK);
	assert_true(p.flag);
	assert_false(p.value_given);
	assert_int_equal(res.first, 3);
	assert_string_equal(a2[3], "--value");

	/* an ambiguous prefix, a flag given a value, a bad id, too many operands */
	char *a3[] = { "probe", "--va", "1", NULL };
	assert_int_equal(probe_parse(&p, &res, a3, 3, err, sizeof err), HB_ERR_ARG);
	assert_non_null(strstr(err, "ambiguous option '--va'"));
	char *a4[] = { "probe", "--flag=yes", NULL };
	assert_int_equal(probe_parse(&p, &res, a4, 2, err, sizeof err), HB_ERR_ARG);
	assert_non_null(strstr(err, "--flag takes no value"));
	char *a5[] = { "probe", "--id", "0", NULL };
	assert_int_equal(probe_parse(&p, &res, a5, 3, err, sizeof err), HB_ERR_ARG);
	assert_string_equal(err, "henrybench: --id '0' is not a record id: accepted a whole number from 1\n");
	char *a6[] = { "probe", "a", "b", "c", NULL };
	assert_int_equal(probe_parse(&p, &res, a6, 4, err, sizeof err), HB_ERR_ARG);
	assert_non_null(strstr(err, "unexpected argument 'c'"));

	/* a STOP option ends the line: nothing after it is read */
	char *a7[] = { "probe", "--list", "--bogus", NULL };
	assert_int_equal(probe_parse(&p, &res, a7, 3, err, sizeof err), HB_OK);
	assert_true(res.done);
	assert_ptr_equal(res.stop, &probe_table[7]);
	assert_true(p.stopped);

	/* -h prints the help (on stdout) and ends the line too */
	fflush(stdout);
	int saved = dup(STDOUT_FILENO);
	FILE *tmp = tmpfile();
	dup2(fileno(tmp), STDOUT_FILENO);
	char *a8[] = { "probe", "-jh", NULL };
	int rc = probe_parse(&p, &res, a8, 2, err, sizeof err);
	fflush(stdout);
	dup2(saved, STDOUT_FILENO);
	close(saved);
	fclose(tmp);
	assert_int_equal(rc, HB_OK);
	assert_true(res.done);
	assert_null(res.stop);
	assert_true(p.json);
}

int main(void)
{
	const char *bin = getenv("HENRYBENCH_BIN");
	if (bin && *bin)
		hb_bin = bin;
	if (access(hb_bin, X_OK) != 0) {
		fprintf(stderr, "%s not found: run from the repository root after 'make'\n", hb_bin);
		return 1;
	}
	snprintf(tmpdir, sizeof tmpdir, "/tmp/hb-test-cli-options-XXXXXX");
	if (!mkdtemp(tmpdir))
		return 1;
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_parser_rules),
		cmocka_unit_test(test_unknown_option_exits_2_with_one_line),
		cmocka_unit_test(test_out_of_range_names_value_and_range),
		cmocka_unit_test(test_enum_lists_accepted_words),
		cmocka_unit_test(test_help_lists_every_option),
		cmocka_unit_test(test_completion_lists_every_command_and_option),
	};
	int rc = cmocka_run_group_tests(tests, NULL, NULL);
	char cleanup[128];
	snprintf(cleanup, sizeof cleanup, "rm -rf '%s'", tmpdir);
	if (system(cleanup) != 0)
		rc = rc ? rc : 1;
	return rc;
}
