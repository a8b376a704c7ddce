/* drivers/settings.c - reads back a setting an instrument holds (query.* operations of a profile), for the sweep's start and end snapshots */
#include <ctype.h>
#include <string.h>

#include "profile_internal.h"

/*
 * What a sweep asked for is not necessarily what the meter did: a front
 * panel touched mid-sweep, a setting the meter rounded or refused quietly.
 * The profile's query.<setting> operations ask the instrument itself; the
 * reply is kept as text, as the instrument gave it, so nothing is lost to
 * a conversion.
 */
int hb_instrument_query_setting(hb_instrument *in, const char *name, char *reply, size_t cap)
{
	int rc = hb_instrument_usable(in);
	if (rc < 0)
		return rc;
	if (!name || !reply || cap == 0)
		return hb_instrument_fail(in, HB_ERR_ARG, "setting query: no name or no place for the reply");
	hb_instrument_kind kind = hb_profile_kind(in->profile);
	char key_name[64];
	/* The supply's output state has its own operation already. */
	if (kind == HB_KIND_SUPPLY && strcmp(name, "output.state") == 0)
		snprintf(key_name, sizeof key_name, "output.state");
	else
		snprintf(key_name, sizeof key_name, "query.%s", name);
	int key = hb_profile_key_of(kind, key_name);
	if (key < 0 || !hb_instrument_has(in, (hb_pkey)key))
		return hb_instrument_fail(in, HB_ERR_UNSUPPORTED, "setting '%s': profile '%s' has no '%s' operation", name,
					  hb_profile_name(in->profile), key_name);
	char what[96];
	snprintf(what, sizeof what, "read back %s", name);
	rc = hb_instrument_ask(in, (hb_pkey)key, what, reply, cap);
	if (rc < 0)
		return rc;
	/* Trimmed, so two replies that differ only in blanks compare equal. */
	size_t n = strlen(reply);
	while (n > 0 && isspace((unsigned char)reply[n - 1]))
		reply[--n] = '\0';
	size_t lead = 0;
	while (isspace((unsigned char)reply[lead]))
		lead++;
	memmove(reply, reply + lead, n - lead + 1);
	return HB_OK;
}
