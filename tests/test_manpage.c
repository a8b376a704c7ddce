/* tests/test_manpage.c - henrybench.1 and the zsh completion: generated from the option tables, every option present, rendered by man, parsed by zsh */
#define _XOPEN_SOURCE 700 /* the fixture's terminal */
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include <stdlib.h>
#include <string.h>

#include "cli_fixture.h"
#include "src/cli/cli.h"

static int group_setup(void **state)
{
	(void)state;
	return cli_fixture_setup("manpage");
}

static char *output_of(const char *cmd, int *status)
{
	FILE *p = popen(cmd, "r");
	assert_non_null(p);
	text t = { 0 };
	char buf[4096];
	size_t n;
	while ((n = fread(buf, 1, sizeof buf, p)) > 0)
		text_add(&t, buf, n);
	*status = pclose(p);
	return t.s ? t.s : calloc(1, 1);
}

static bool have(const char *tool)
{
	char cmd[200];
	snprintf(cmd, sizeof cmd, "command -v %s >/dev/null 2>&1", tool);
	return system(cmd) == 0;
}

/* The part of a text from `start` to the next `end` (or its end), copied. */
static char *section(const char *text, const char *start, const char *end)
{
	const char *a = strstr(text, start);
	if (!a)
		return NULL;
	const char *b = strstr(a + strlen(start), end);
	size_t len = b ? (size_t)(b - a) : strlen(a);
	char *s = malloc(len + 1);
	memcpy(s, a, len);
	s[len] = '\0';
	return s;
}

/* The committed henrybench.1 is what the option tables give today: an option
 * added without `make man` fails here. */
static void test_committed_page_is_current(void **state)
{
	(void)state;
	run r;
	hb_run(&r, station_bare, "manpage", NULL);
	assert_int_equal(r.status, 0);
	char *file = slurp("henrybench.1");
	if (!file)
		fail_msg("henrybench.1 not found at the repository top (run the tests from there)");
	if (strcmp(file, r.out) != 0)
		fail_msg("henrybench.1 differs from 'henrybench manpage': run 'make man' and commit it");
	free(file);
	run_free(&r);
}

/* Every command has its section and every option of its table, with --help,
 * is in it, written as roff writes an option (\-\-name). */
static void test_every_option_in_its_section(void **state)
{
	(void)state;
	run r;
	hb_run(&r, station_bare, "manpage", NULL);
	assert_int_equal(r.status, 0);
	int options = 0;
	for (const hb_command *c = hb_commands; c->name; c++) {
		char head[64];
		snprintf(head, sizeof head, "\n.SS %s\n", c->name);
		char *sec = section(r.out, head, "\n.SS ");
		if (!sec)
			fail_msg("no section for command %s", c->name);
		for (const hb_opt *o = c->opts->opts;; o++) {
			const hb_opt *opt = o->name ? o : hb_opt_help_entry();
			/* roff writes every dash of an option as \- */
			char want[120] = "\\-\\-";
			for (const char *ch = opt->name; *ch; ch++) {
				size_t len = strlen(want);
				if (*ch == '-')
					snprintf(want + len, sizeof want - len, "\\-");
				else
					snprintf(want + len, sizeof want - len, "%c", *ch);
			}
			/* the option's own line: ".B " then the head holding the name */
			char *at = strstr(sec, want);
			bool found = false;
			for (; at; at = strstr(at + 1, want)) {
				char next = at[strlen(want)];
				if (next == ' ' || next == '\n' || next == '=')
					found = true;
			}
			if (!found)
				fail_msg("command %s: option --%s missing from the man page", c->name, opt->name);
			options++;
			if (!o->name)
				break;
		}
		free(sec);
	}
	assert_true(options > 40);
	/* man(7): the sections a manual page of a command carries */
	static const char *const heads[] = { "\n.SH NAME\n", "\n.SH SYNOPSIS\n", "\n.SH EXIT STATUS\n",
					     "\n.SH ENVIRONMENT\n", "\n.SH FILES\n" };
	for (size_t i = 0; i < sizeof heads / sizeof heads[0]; i++)
		if (!strstr(r.out, heads[i]))
			fail_msg("no section%s", heads[i]);
	/* every variable the program reads (grep getenv in the sources) is documented */
	static const char *const env[] = { "HENRYBENCH_DB", "HENRYBENCH_STATION", "HENRYBENCH_PROFILE_PATH",
					   "XDG_DATA_HOME", "XDG_CONFIG_HOME", "TMPDIR", "USER" };
	char *envsec = section(r.out, "\n.SH ENVIRONMENT\n", "\n.SH ");
	assert_non_null(envsec);
	for (size_t i = 0; i < sizeof env / sizeof env[0]; i++) {
		char want[64];
		snprintf(want, sizeof want, ".B %s\n", env[i]);
		if (!strstr(envsec, want))
			fail_msg("environment variable %s not documented", env[i]);
	}
	free(envsec);
	run_free(&r);
}

/* groff's own lint: no warning at all (-ww) with the man macros. */
static void test_groff_lint(void **state)
{
	(void)state;
	if (!have("groff")) {
		print_message("groff not installed: lint skipped\n");
		skip();
	}
	int st;
	char *out = output_of("groff -man -ww -z henrybench.1 2>&1", &st);
	if (st != 0 || out[0])
		fail_msg("groff -man -ww -z henrybench.1: status %d\n%s", st, out);
	free(out);
}

/* man -l renders the page: its title line and a command's usage come out as text. */
static void test_man_renders(void **state)
{
	(void)state;
	if (!have("man")) {
		print_message("man not installed: rendering skipped\n");
		skip();
	}
	int st;
	char *out = output_of("MANWIDTH=100 MAN_KEEP_FORMATTING= man -l henrybench.1 2>&1 | col -b", &st);
	if (st != 0)
		fail_msg("man -l henrybench.1: status %d\n%s", st, out);
	assert_non_null(strstr(out, "HENRYBENCH(1)"));
	assert_non_null(strstr(out, "henrybench sweep --part P --unit SERIAL"));
	assert_non_null(strstr(out, "EXIT STATUS"));
	free(out);
}

/* The zsh script: every command in the list, every option in its command's
 * branch, and zsh reads it (syntax) and registers it after compinit. */
static void test_zsh_completion(void **state)
{
	(void)state;
	run r;
	hb_run(&r, station_bare, "completion", "zsh", NULL);
	assert_int_equal(r.status, 0);
	for (const hb_command *c = hb_commands; c->name; c++) {
		char item[64], branch[64];
		snprintf(item, sizeof item, "\t\t'%s:", c->name);
		if (!strstr(r.out, item))
			fail_msg("zsh: command %s not offered", c->name);
		snprintf(branch, sizeof branch, "\n\t\t%s)\n", c->name);
		char *sec = section(r.out, branch, ";;");
		if (!sec)
			fail_msg("zsh: no branch for %s", c->name);
		for (const hb_opt *o = c->opts->opts; o->name; o++) {
			char want[80];
			if (o->alias)
				snprintf(want, sizeof want, "{-%c,--%s}'[", o->alias, o->name);
			else
				snprintf(want, sizeof want, "'--%s[", o->name);
			if (!strstr(sec, want))
				fail_msg("zsh: %s --%s missing", c->name, o->name);
		}
		free(sec);
	}
	/* shell words the option tables give (sweeps --kind) offered as a list */
	assert_non_null(strstr(r.out, ":(bias frequency)'"));
	if (!have("zsh")) {
		print_message("zsh not installed: parsing skipped\n");
		run_free(&r);
		skip();
	}
	char path[400], cmd[1200];
	snprintf(path, sizeof path, "%s/_henrybench", tmpdir);
	write_file(path, r.out);
	int st;
	snprintf(cmd, sizeof cmd, "zsh -n '%s' 2>&1", path);
	char *out = output_of(cmd, &st);
	if (st != 0)
		fail_msg("zsh -n: %s", out);
	free(out);
	snprintf(cmd, sizeof cmd,
		 "HOME='%s' zsh -f -c 'autoload -Uz compinit && compinit -u -D && source \"%s\" && print -r -- $_comps[henrybench]' 2>&1",
		 tmpdir, path);
	out = output_of(cmd, &st);
	if (st != 0 || strcmp(out, "_henrybench\n") != 0)
		fail_msg("zsh did not register the completion (status %d): %s", st, out);
	free(out);
	run_free(&r);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_committed_page_is_current),
		cmocka_unit_test(test_every_option_in_its_section),
		cmocka_unit_test(test_groff_lint),
		cmocka_unit_test(test_man_renders),
		cmocka_unit_test(test_zsh_completion),
	};
	return cmocka_run_group_tests(tests, group_setup, cli_fixture_teardown);
}
