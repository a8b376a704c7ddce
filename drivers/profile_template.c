/* drivers/profile_template.c - the template engine: placeholders checked at load, operations expanded to command text */
#include <ctype.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "../common/hb_text.h"
#include "profile_internal.h"
#include "profile_keys.h"

static const char *const type_names[] = { "real", "int", "enum", "bool" };

/* ------------------------------------------------------------------ */
/* templates                                                           */
/* ------------------------------------------------------------------ */

static const phdef *find_ph(const phdef *list, const char *name, size_t len)
{
	for (const phdef *ph = list; ph && ph->name; ph++)
		if (strlen(ph->name) == len && strncmp(ph->name, name, len) == 0)
			return ph;
	return NULL;
}

static void describe_placeholders(const phdef *list, char *buf, size_t cap)
{
	buf[0] = '\0';
	if (!list || !list->name) {
		snprintf(buf, cap, "none");
		return;
	}
	size_t used = 0;
	for (const phdef *ph = list; ph->name; ph++) {
		int n = snprintf(buf + used, cap - used, "%s{%s:%s}", ph == list ? "" : " ", ph->name,
				 type_names[ph->type]);
		if (n < 0 || (size_t)n >= cap - used)
			return;
		used += (size_t)n;
	}
}

/* Checks every {name:type} against the operation's list and that each
 * listed placeholder appears; why: a typo would otherwise go out on the
 * wire as literal text and surface as an instrument syntax error. */
int hb_profile_check_template(const keydef *kd, const char *text, char *why, size_t whylen)
{
	bool seen[8] = { false };
	char allowed[160];
	describe_placeholders(kd->placeholders, allowed, sizeof allowed);
	for (const char *s = text; *s; s++) {
		if (*s == '}') {
			if (s[1] == '}') {
				s++;
				continue;
			}
			hb_set_err(why, whylen, "stray '}' (write '}}' for a literal brace)");
			return HB_ERR_PROFILE;
		}
		if (*s != '{')
			continue;
		if (s[1] == '{') {
			s++;
			continue;
		}
		const char *close = strchr(s, '}');
		if (!close) {
			hb_set_err(why, whylen, "unterminated placeholder '%s'", s);
			return HB_ERR_PROFILE;
		}
		const char *colon = memchr(s, ':', (size_t)(close - s));
		if (!colon) {
			hb_set_err(why, whylen, "placeholder '%.*s' lacks a type (write {name:type}; this operation takes %s)",
				(int)(close - s + 1), s, allowed);
			return HB_ERR_PROFILE;
		}
		const phdef *ph = find_ph(kd->placeholders, s + 1, (size_t)(colon - s - 1));
		if (!ph) {
			hb_set_err(why, whylen, "unknown placeholder '%.*s' (this operation takes %s)", (int)(close - s + 1), s,
				allowed);
			return HB_ERR_PROFILE;
		}
		size_t tlen = (size_t)(close - colon - 1);
		const char *want = type_names[ph->type];
		if (strlen(want) != tlen || strncmp(colon + 1, want, tlen) != 0) {
			hb_set_err(why, whylen, "placeholder '%.*s' has the wrong type (expected {%s:%s})", (int)(close - s + 1),
				s, ph->name, want);
			return HB_ERR_PROFILE;
		}
		seen[ph - kd->placeholders] = true;
		s = close;
	}
	for (const phdef *ph = kd->placeholders; ph && ph->name; ph++) {
		if (!seen[ph - kd->placeholders]) {
			hb_set_err(why, whylen, "template lacks the placeholder {%s:%s}", ph->name, type_names[ph->type]);
			return HB_ERR_PROFILE;
		}
	}
	return HB_OK;
}

static const char *bool_default_token(int choice)
{
	return choice ? "ON" : "OFF";
}

int hb_profile_expand(const hb_profile *p, hb_pkey op, const hb_parg *args, size_t nargs, char *out, size_t cap,
		      char *err, size_t errlen)
{
	const keydef *kd = &hb_profile_keys[op];
	const char *text = hb_profile_text(p, op);
	if (!text) {
		hb_set_err(err, errlen, "profile '%s' has no '%s' operation", hb_profile_name(p), kd->name);
		return HB_ERR_UNSUPPORTED;
	}
	size_t used = 0;
	for (const char *s = text; *s; s++) {
		char piece[128];
		const char *add = piece;
		size_t addlen;
		if ((*s == '{' && s[1] == '{') || (*s == '}' && s[1] == '}')) {
			piece[0] = *s;
			addlen = 1;
			s++;
		} else if (*s == '{') {
			/* Validated at load, so the shape is known good. */
			const char *colon = strchr(s, ':');
			const char *close = strchr(s, '}');
			const phdef *ph = find_ph(kd->placeholders, s + 1, (size_t)(colon - s - 1));
			const hb_parg *arg = NULL;
			for (size_t i = 0; i < nargs; i++)
				if (strcmp(args[i].name, ph->name) == 0)
					arg = &args[i];
			if (!arg) {
				hb_set_err(err, errlen, "%s: no value for {%s}", kd->name, ph->name);
				return HB_ERR_ARG;
			}
			switch (ph->type) {
			case HB_PT_REAL:
				if (hb_scpi_format_double(piece, sizeof piece, arg->real) < 0) {
					hb_set_err(err, errlen, "%s: cannot format %g", kd->name, arg->real);
					return HB_ERR_ARG;
				}
				break;
			case HB_PT_INT:
				snprintf(piece, sizeof piece, "%ld", arg->integer);
				break;
			case HB_PT_ENUM:
			case HB_PT_BOOL: {
				int nvalues = 0;
				while (ph->values[nvalues])
					nvalues++;
				if (arg->choice < 0 || arg->choice >= nvalues) {
					hb_set_err(err, errlen, "%s: value %d out of range for {%s}", kd->name, arg->choice,
						ph->name);
					return HB_ERR_ARG;
				}
				hb_pkey tk = (hb_pkey)(ph->token_key + arg->choice);
				/* For booleans the key order is on, off; choice is 1 for on. */
				if (ph->type == HB_PT_BOOL)
					tk = (hb_pkey)(ph->token_key + (arg->choice ? 0 : 1));
				add = hb_profile_text(p, tk);
				if (!add && ph->type == HB_PT_BOOL)
					add = bool_default_token(arg->choice);
				if (!add) {
					hb_set_err(err, errlen, "profile '%s' has no token for %s '%s' (key '%s' not set)",
						hb_profile_name(p), ph->name, ph->values[arg->choice], hb_profile_keys[tk].name);
					return HB_ERR_UNSUPPORTED;
				}
				break;
			}
			}
			s = close;
			addlen = strlen(add);
		} else {
			piece[0] = *s;
			addlen = 1;
		}
		if (used + addlen + 1 > cap) {
			hb_set_err(err, errlen, "%s: command longer than %zu bytes", kd->name, cap - 1);
			return HB_ERR_ARG;
		}
		memcpy(out + used, add, addlen);
		used += addlen;
	}
	out[used] = '\0';
	return HB_OK;
}
