/* drivers/profile_keys.h - the profile key table's shape, shared by the INI loader (profile.c) and the template engine (profile_template.c) */
#ifndef HB_PROFILE_KEYS_H
#define HB_PROFILE_KEYS_H

#include <stdbool.h>
#include <stddef.h>

#include "profile_internal.h"

enum section { SEC_PROFILE, SEC_LCR, SEC_SUPPLY };

enum vtype { VT_TEMPLATE, VT_QUERY, VT_INT, VT_REAL, VT_TEXT, VT_BOOL, VT_REGEX, VT_KIND, VT_NAME };

/* A placeholder an operation's template must carry. Enumerations name
 * their values; the tokens sent for them are separate keys starting at
 * token_key, in the order of values. */
typedef struct phdef {
	const char *name;
	hb_ptype type;
	const char *const *values;
	hb_pkey token_key;
} phdef;

typedef struct keydef {
	hb_pkey id;
	enum section section;
	const char *name;
	enum vtype type;
	bool required;
	double min, max;          /* VT_INT, VT_REAL */
	const phdef *placeholders; /* VT_TEMPLATE */
} keydef;

/* Every key a profile may carry, indexed by hb_pkey (profile.c). */
extern const keydef hb_profile_keys[HB_PK_COUNT];

/* Checks an operation's template against the placeholders its key names:
 * every one present with its declared type, no unknown name, braces closed
 * ('{{' and '}}' are literal braces). HB_ERR_PROFILE with a one-line why
 * otherwise. */
int hb_profile_check_template(const keydef *kd, const char *text, char *why, size_t whylen);

#endif
