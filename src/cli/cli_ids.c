/* src/cli/cli_ids.c - one resolver for record handles typed on the command line: the local integer id or the global identity */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "../../common/hb_text.h"
#include "../../common/hb_uid.h"
#include "../../db/hb_db.h"
#include "cli.h"

int hb_cli_text_arg(const char *field, const char *text, size_t limit)
{
	char why[240];
	if (hb_text_check(field, text, limit, why, sizeof why) != HB_OK) {
		hb_cli_error("%s", why);
		return HB_ERR_ARG;
	}
	return HB_OK;
}

int hb_cli_resolve_id(int kind_code, const char *text, long long *id)
{
	hb_db_record kind = (hb_db_record)kind_code;
	/* checked before it is echoed in any message below */
	char field[64];
	snprintf(field, sizeof field, "%s id", hb_db_record_name(kind));
	if (hb_cli_text_arg(field, text, HB_TEXT_ID_MAX) != HB_OK)
		return HB_ERR_ARG;
	char *end = NULL;
	long long v = strtoll(text, &end, 10);
	if (*text && end && !*end && v > 0) {
		*id = v;
		return HB_OK;
	}
	uint8_t b[16];
	if (hb_uid_parse(text, b) != HB_OK) {
		hb_cli_error("%s id '%s' is neither a positive integer nor a global identity (8-4-4-4-12 hexadecimal)",
			     hb_db_record_name(kind), text);
		return HB_ERR_ARG;
	}
	/* a global identity means nothing without the store it is kept in */
	hb_db *db = hb_cli_open_store_read(NULL);
	if (!db)
		return HB_ERR_DB;
	int64_t local = 0;
	int rc = hb_db_uid_find(db, kind, text, &local);
	if (rc != HB_OK)
		hb_cli_error("%s", hb_db_errmsg(db));
	else
		*id = local;
	hb_db_close(db);
	return rc == HB_ERR_NOTFOUND ? HB_ERR_ARG : rc;
}

const char *hb_cli_part_number(const char *text, char *buf, size_t cap)
{
	uint8_t b[16];
	if (hb_uid_parse(text, b) != HB_OK)
		return text;
	hb_db *db = NULL;
	if (hb_db_open_as(hb_global.db_path, HB_DB_OPEN_READ, &db) != HB_OK) {
		hb_db_close(db);
		return text;
	}
	int64_t id = 0;
	hb_db_part p;
	if (hb_db_uid_find(db, HB_DB_REC_PART, text, &id) == HB_OK && hb_db_part_get_id(db, id, &p) == HB_OK) {
		snprintf(buf, cap, "%s", p.part_number);
		text = buf;
	}
	hb_db_close(db);
	return text;
}

const char *hb_cli_lot_code(const char *text, char *code, size_t code_cap, char *part, size_t part_cap,
			    const char **part_number)
{
	uint8_t b[16];
	if (hb_uid_parse(text, b) != HB_OK)
		return text;
	hb_db *db = NULL;
	if (hb_db_open_as(hb_global.db_path, HB_DB_OPEN_READ, &db) != HB_OK) {
		hb_db_close(db);
		return text;
	}
	int64_t id = 0;
	hb_db_lot lot;
	hb_db_part p;
	/* the lot's own code and its part, so that a code two parts share is no longer ambiguous */
	if (hb_db_uid_find(db, HB_DB_REC_LOT, text, &id) == HB_OK && hb_db_lot_get(db, id, &lot) == HB_OK &&
	    hb_db_part_get_id(db, lot.part_id, &p) == HB_OK) {
		snprintf(code, code_cap, "%s", lot.lot_code);
		snprintf(part, part_cap, "%s", p.part_number);
		*part_number = part;
		text = code;
	}
	hb_db_close(db);
	return text;
}
