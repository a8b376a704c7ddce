/* src/cli/cmd_identify.c - 'identify': ask instruments who they are, which dialect profile fits, what their error queue holds */
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include <jansson.h>

#include "cli.h"
#include "../../drivers/hb_drivers.h"
#include "../../db/hb_db.h"

#define IDENTIFY_ERRORS_MAX 32

typedef struct identify_args {
	bool json;
} identify_args;

static const hb_opt identify_table[] = {
	{ .name = "json", .alias = 'j', .kind = HB_OPT_FLAG, .off = offsetof(identify_args, json),
	  .help = "one JSON array on stdout instead of text" },
	{ .name = NULL },
};

const hb_cmd_opts hb_opts_identify = {
	.name = "identify",
	.usage = "[--json] RESOURCE...",
	.about = "\nAsks each instrument for *IDN?, names the dialect profile henrybench would use,\n"
		 "its kind (lcr or supply) and the operations the profile provides, then empties and\n"
		 "shows the instrument's error queue.\n\n"
		 "resources:\n"
		 "  sim:lcr, sim:supply                 the built-in simulated bench\n"
		 "  tcp://HOST[:PORT]                   raw SCPI socket (port 5025 by default)\n"
		 "  serial:/dev/ttyUSB0?baud=9600       serial port (libserialport)\n"
		 "  tty:/dev/pts/4                      terminal device (termios)\n"
		 "  add ?profile=NAME|PATH to force a profile instead of matching on *IDN?\n",
	.opts = identify_table,
	.max_operands = -1,
	.operands = "sim:lcr sim:supply",
	.epilog = "The global --trace[=FILE] option logs every exchange. Profiles are searched in\n"
		  "$HENRYBENCH_PROFILE_PATH, the installed profile directory and drivers/profiles\n"
		  "beside the program (see docs/profiles.md).\n"
		  "exit status: 0 all answered, 1 an instrument failed, 2 bad usage\n",
};

typedef struct identity {
	const char *resource;
	int status;
	char error[512];
	hb_idn idn;
	bool forced;
	const char *kind;           /* "lcr", "supply" or NULL = unknown */
	char kind_note[320];
	hb_profile *profile;        /* the chosen or forced profile, NULL when unknown */
	hb_profile *fallback[2];    /* generic candidates when no profile matched */
	hb_scpi_error errors[IDENTIFY_ERRORS_MAX];
	size_t nerrors;
	bool lost;
	bool errors_read;
	bool echoes;                /* *IDN? came back before its reply */
} identity;

static const char *kind_name(hb_instrument_kind kind)
{
	return kind == HB_KIND_LCR ? "lcr" : "supply";
}

/* Decides the kind by which profiles claim the instrument: a profile's
 * match.maker/match.model say which kind of instrument it was written for. */
static int choose_profile(identity *id, const hb_resource *res)
{
	char err[512];
	int rc;
	if (res->profile[0]) {
		rc = hb_profile_find(res->profile, &id->profile, err, sizeof err);
		if (rc < 0) {
			snprintf(id->error, sizeof id->error, "%s", err);
			return rc;
		}
		id->forced = true;
		id->kind = kind_name(hb_profile_kind(id->profile));
		snprintf(id->kind_note, sizeof id->kind_note, "forced by profile=%s", res->profile);
		return HB_OK;
	}
	hb_profile *cand[2] = { NULL, NULL };
	const hb_instrument_kind kinds[2] = { HB_KIND_LCR, HB_KIND_SUPPLY };
	for (int i = 0; i < 2; i++) {
		rc = hb_profile_match(kinds[i], &id->idn, &cand[i], err, sizeof err);
		if (rc < 0) {
			snprintf(id->error, sizeof id->error, "%s", err);
			hb_profile_free(cand[0]);
			return rc;
		}
	}
	bool m0 = hb_profile_matches(cand[0], &id->idn), m1 = hb_profile_matches(cand[1], &id->idn);
	if (m0 != m1) {
		int pick = m0 ? 0 : 1;
		id->profile = cand[pick];
		id->kind = kind_name(kinds[pick]);
		hb_profile_free(cand[1 - pick]);
		return HB_OK;
	}
	id->fallback[0] = cand[0];
	id->fallback[1] = cand[1];
	snprintf(id->kind_note, sizeof id->kind_note, "%s",
		 m0 ? "unknown (both an lcr and a supply profile match; force one with ?profile=)"
		    : "unknown (no profile matched; generic profiles would be used)");
	return HB_OK;
}

static int identify_one(identity *id)
{
	hb_scpi *scpi = NULL;
	int rc = hb_scpi_open(id->resource, &scpi);
	if (rc < 0) {
		snprintf(id->error, sizeof id->error, "%s", hb_scpi_errmsg(scpi));
		goto out;
	}
	if (hb_global.trace)
		hb_scpi_set_trace(scpi, hb_global.trace, "identify");
	rc = hb_scpi_idn(scpi, &id->idn);
	if (rc < 0) {
		snprintf(id->error, sizeof id->error, "*IDN?: %s", hb_scpi_errmsg(scpi));
		goto out;
	}
	rc = choose_profile(id, hb_scpi_resource(scpi));
	if (rc < 0)
		goto out;
	/* read the error queue past the echoes too */
	id->echoes = hb_scpi_echo_seen(scpi);
	if (id->echoes)
		hb_scpi_set_echo(scpi, true);
	rc = hb_scpi_errors(scpi, id->errors, IDENTIFY_ERRORS_MAX, &id->nerrors, &id->lost);
	if (rc < 0) {
		snprintf(id->error, sizeof id->error, "error queue: %s", hb_scpi_errmsg(scpi));
		goto out;
	}
	id->errors_read = true;
out:
	hb_scpi_close(scpi);
	id->status = rc;
	return rc;
}

static void print_text(const identity *id)
{
	printf("%s\n", id->resource);
	if (id->idn.raw[0]) {
		printf("  maker:       %s\n", id->idn.maker);
		printf("  model:       %s\n", id->idn.model);
		printf("  serial:      %s\n", id->idn.serial);
		printf("  firmware:    %s\n", id->idn.firmware);
	}
	if (id->profile) {
		printf("  kind:        %s%s%s%s\n", id->kind, id->kind_note[0] ? " (" : "", id->kind_note,
		       id->kind_note[0] ? ")" : "");
		printf("  profile:     %s (%s)\n", hb_profile_name(id->profile), hb_profile_path(id->profile));
		char has[512], lacks[512];
		hb_profile_operations(id->profile, has, sizeof has, lacks, sizeof lacks);
		printf("  operations:  %s\n", has);
		printf("  lacks:       %s\n", lacks[0] ? lacks : "nothing");
		if (strchr(has, '?'))
			printf("               (? optional: probed at open, absent if the instrument rejects it)\n");
	} else if (id->fallback[0]) {
		printf("  kind:        %s\n", id->kind_note);
		printf("  profiles:    %s (%s), %s (%s)\n", hb_profile_name(id->fallback[0]),
		       hb_profile_path(id->fallback[0]), hb_profile_name(id->fallback[1]),
		       hb_profile_path(id->fallback[1]));
	}
	if (id->echoes)
		printf("  echo:        the instrument sends each command back before its reply: set link.echo = yes\n"
		       "               in the profile's [profile] section, or add ?echo=yes to the resource\n");
	if (id->errors_read) {
		if (id->nerrors == 0 && !id->lost)
			printf("  error queue: empty\n");
		else
			printf("  error queue:\n");
		for (size_t i = 0; i < id->nerrors; i++)
			printf("    %d,\"%s\"\n", id->errors[i].code, id->errors[i].message);
		if (id->lost)
			printf("    (entries were lost: the queue overflowed)\n");
	}
	if (id->status < 0)
		printf("  failed:      %s\n", id->error);
}

/* A blank-separated list as a JSON array of strings. */
static json_t *words_json(const char *list)
{
	json_t *a = json_array();
	for (const char *s = list; a && *s;) {
		while (*s == ' ')
			s++;
		const char *start = s;
		while (*s && *s != ' ')
			s++;
		if (s > start)
			json_array_append_new(a, json_stringn(start, (size_t)(s - start)));
	}
	return a;
}

static json_t *profile_json(const hb_profile *p)
{
	char has[512], lacks[512];
	hb_profile_operations(p, has, sizeof has, lacks, sizeof lacks);
	return json_pack("{s:s, s:s, s:s, s:o, s:o}", "name", hb_profile_name(p), "path", hb_profile_path(p), "kind",
			 kind_name(hb_profile_kind(p)), "operations", words_json(has), "lacks", words_json(lacks));
}

static json_t *to_json(const identity *id)
{
	json_t *o = json_object();
	if (!o)
		return NULL;
	json_object_set_new(o, "resource", json_string(id->resource));
	json_object_set_new(o, "ok", json_boolean(id->status == HB_OK));
	if (id->status < 0) {
		json_object_set_new(o, "status", json_string(hb_status_name(id->status)));
		json_object_set_new(o, "error", json_string(id->error));
	}
	if (id->idn.raw[0]) {
		json_object_set_new(o, "maker", json_string(id->idn.maker));
		json_object_set_new(o, "model", json_string(id->idn.model));
		json_object_set_new(o, "serial", json_string(id->idn.serial));
		json_object_set_new(o, "firmware", json_string(id->idn.firmware));
	}
	json_object_set_new(o, "echoes_commands", json_boolean(id->echoes));
	if (id->profile) {
		json_object_set_new(o, "kind", json_string(id->kind));
		json_object_set_new(o, "forced", json_boolean(id->forced));
		json_object_set_new(o, "profile", profile_json(id->profile));
	} else if (id->fallback[0]) {
		json_object_set_new(o, "kind", json_null());
		json_object_set_new(o, "note", json_string(id->kind_note));
		json_t *c = json_array();
		json_array_append_new(c, profile_json(id->fallback[0]));
		json_array_append_new(c, profile_json(id->fallback[1]));
		json_object_set_new(o, "candidates", c);
	}
	if (id->errors_read) {
		json_t *e = json_array();
		for (size_t i = 0; i < id->nerrors; i++)
			json_array_append_new(e, json_pack("{s:i, s:s}", "code", id->errors[i].code, "message",
							   id->errors[i].message));
		json_object_set_new(o, "errors", e);
		json_object_set_new(o, "errors_lost", json_boolean(id->lost));
	}
	return o;
}

/* Records each instrument that answered in the register of the store
 * named by --db ($HENRYBENCH_DB), or of the default store when it exists
 * already: identify creates no store of its own accord. */
static void register_seen(const identity *ids, int n)
{
	char path[1024];
	const char *p = hb_global.db_path;
	if (!p) {
		if (hb_db_default_path(path, sizeof path) != HB_OK || access(path, F_OK) != 0)
			return;
		p = path;
	}
	hb_db *db = NULL;
	if (hb_db_open(p, &db) == HB_OK) {
		for (int i = 0; i < n; i++)
			if (ids[i].kind && ids[i].idn.raw[0] &&
			    hb_db_instrument_ensure(db, ids[i].kind, ids[i].idn.maker, ids[i].idn.model, ids[i].idn.serial,
						    ids[i].idn.firmware, &(hb_db_instrument){ 0 }, NULL) != HB_OK)
				hb_cli_error("identify: instrument register: %s", hb_db_errmsg(db));
	}
	hb_db_close(db);
}

int hb_cmd_identify(int argc, char **argv)
{
	identify_args a = { .json = false };
	hb_opts_result r;
	if (hb_opts_parse(&hb_opts_identify, argc, argv, &a, &r) != HB_OK)
		return HB_EXIT_USAGE;
	if (r.done)
		return HB_EXIT_OK;
	bool json = a.json;
	int first = r.first;
	int n = argc - first;
	if (n <= 0) {
		hb_cli_error("identify: name at least one RESOURCE (e.g. sim:lcr, tcp://127.0.0.1:5025)");
		return HB_EXIT_USAGE;
	}
	/* Check every resource before talking to any: a typo in the third
	 * must not leave the first two half-done. */
	for (int i = first; i < argc; i++) {
		hb_resource res;
		char err[300];
		if (hb_resource_parse(argv[i], &res, err, sizeof err) < 0) {
			hb_cli_error("identify: %s", err);
			return HB_EXIT_USAGE;
		}
	}
	identity *ids = calloc((size_t)n, sizeof *ids);
	if (!ids) {
		hb_cli_error("identify: out of memory");
		return HB_EXIT_RUNTIME;
	}
	int exit_code = HB_EXIT_OK;
	json_t *all = json ? json_array() : NULL;
	for (int i = 0; i < n; i++) {
		identity *id = &ids[i];
		id->resource = argv[first + i];
		if (identify_one(id) < 0) {
			exit_code = HB_EXIT_RUNTIME;
			if (strncmp(id->error, id->resource, strlen(id->resource)) == 0)
				hb_cli_error("identify: %s", id->error);
			else
				hb_cli_error("identify %s: %s", id->resource, id->error);
		}
		if (json) {
			json_array_append_new(all, to_json(id));
		} else {
			if (i)
				putchar('\n');
			print_text(id);
		}
	}
	if (json) {
		if (json_dumpf(all, stdout, JSON_INDENT(2)) < 0) {
			hb_cli_error("identify: cannot write JSON");
			exit_code = HB_EXIT_RUNTIME;
		}
		putchar('\n');
		json_decref(all);
	}
	register_seen(ids, n);
	for (int i = 0; i < n; i++) {
		hb_profile_free(ids[i].profile);
		hb_profile_free(ids[i].fallback[0]);
		hb_profile_free(ids[i].fallback[1]);
	}
	free(ids);
	fflush(stdout);
	return exit_code;
}
