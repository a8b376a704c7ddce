/* tests/comma_locale.h - a comma-decimal locale for the locale tests: an installed one, or one built with localedef into a temp dir (LOCPATH) */
#ifndef HB_TESTS_COMMA_LOCALE_H
#define HB_TESTS_COMMA_LOCALE_H

#include <locale.h>
#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/wait.h>
#include <unistd.h>

/* Whether locale `name` can be made current for LC_NUMERIC and really has
 * a comma as decimal point; leaves LC_NUMERIC at "C". */
static bool comma_locale_works(const char *name)
{
	if (!setlocale(LC_NUMERIC, name))
		return false;
	bool comma = strcmp(localeconv()->decimal_point, ",") == 0;
	setlocale(LC_NUMERIC, "C");
	return comma;
}

/* The temp dir a locale was built in; removed when the process exits (the
 * loaded locale stays mapped, so nothing in use goes away). */
static char comma_locale_dir[64];

static void comma_locale_cleanup(void)
{
	if (!comma_locale_dir[0])
		return;
	char cmd[128];
	snprintf(cmd, sizeof cmd, "rm -rf '%s'", comma_locale_dir);
	if (system(cmd) != 0)
		fprintf(stderr, "could not remove %s\n", comma_locale_dir);
	comma_locale_dir[0] = '\0';
}

/* Finds a comma-decimal locale and returns its name, or NULL (with the
 * reason in why) when there is none and none can be built. A test machine
 * often has only C and C.UTF-8: then de_DE is compiled from the system's
 * locale sources into a temp dir, which LOCPATH points glibc at, so the
 * test still runs instead of passing without a comma in sight. */
static const char *comma_locale_find(char *why, size_t why_cap)
{
	static const char *const names[] = { "de_DE.UTF-8", "de_DE.utf8", "de_DE", "fr_FR.UTF-8", "nl_NL.UTF-8", NULL };
	for (int i = 0; names[i]; i++)
		if (comma_locale_works(names[i]))
			return names[i];
	if (access("/usr/share/i18n/locales/de_DE", R_OK) != 0) {
		snprintf(why, why_cap, "no comma-decimal locale installed and no de_DE locale source to build one");
		return NULL;
	}
	char *dir = comma_locale_dir;
	snprintf(comma_locale_dir, sizeof comma_locale_dir, "/tmp/hb-test-locale-XXXXXX");
	if (!mkdtemp(comma_locale_dir)) {
		comma_locale_dir[0] = '\0';
		snprintf(why, why_cap, "no comma-decimal locale installed and no temp dir to build one");
		return NULL;
	}
	atexit(comma_locale_cleanup);
	char cmd[256];
	/* localedef warns (exit 1) about harmless things in some locale sources; the check below decides. */
	snprintf(cmd, sizeof cmd, "localedef -i de_DE -f UTF-8 '%s/de_DE.UTF-8' >/dev/null 2>&1", dir);
	int rc = system(cmd);
	if (rc == -1 || (WIFEXITED(rc) && WEXITSTATUS(rc) == 127)) {
		snprintf(why, why_cap, "no comma-decimal locale installed and no localedef to build one");
		return NULL;
	}
	setenv("LOCPATH", dir, 1);
	if (comma_locale_works("de_DE.UTF-8"))
		return "de_DE.UTF-8";
	unsetenv("LOCPATH");
	snprintf(why, why_cap, "no comma-decimal locale installed and localedef could not build de_DE.UTF-8 in %s", dir);
	return NULL;
}

#endif
