/* drivers/profile_regex.c - a profile's match.* patterns under PCRE2 with match, depth and heap limits, so no pattern can take the machine */
#include <stdio.h>
#include <string.h>

#include "../common/hb_status.h"
#include "../common/hb_text.h"
#include "profile_internal.h"

/* Parentheses nest at most this deep in a pattern: a maker or model name
 * needs two or three levels; deeper is a mistake or an attack. */
#define PATTERN_NEST_MAX 16

pcre2_code *hb_profile_regex_compile(const char *pattern, char *why, size_t whylen)
{
	pcre2_compile_context *cc = pcre2_compile_context_create(NULL);
	if (!cc) {
		hb_set_err(why, whylen, "out of memory");
		return NULL;
	}
	pcre2_set_parens_nest_limit(cc, PATTERN_NEST_MAX);
	int code = 0;
	PCRE2_SIZE offset = 0;
	/* UTF off: an IDN is bytes, and a stray byte must not make a match fail
	 * with an encoding error. NO_AUTO_CAPTURE: nothing is extracted. */
	pcre2_code *re = pcre2_compile((PCRE2_SPTR)pattern, PCRE2_ZERO_TERMINATED, PCRE2_CASELESS | PCRE2_NO_AUTO_CAPTURE,
				       &code, &offset, cc);
	pcre2_compile_context_free(cc);
	if (!re) {
		PCRE2_UCHAR msg[160];
		if (pcre2_get_error_message(code, msg, sizeof msg) < 0)
			snprintf((char *)msg, sizeof msg, "error %d", code);
		snprintf(why, whylen, "%s at offset %zu", (const char *)msg, (size_t)offset);
	}
	return re;
}

int hb_profile_regex_match(const pcre2_code *re, const char *subject, char *why, size_t whylen)
{
	pcre2_match_context *mc = pcre2_match_context_create(NULL);
	pcre2_match_data *md = pcre2_match_data_create_from_pattern(re, NULL);
	int rc;
	if (!mc || !md) {
		hb_set_err(why, whylen, "out of memory");
		rc = HB_ERR_NOMEM;
		goto cleanup;
	}
	pcre2_set_match_limit(mc, HB_PROFILE_MATCH_LIMIT);
	pcre2_set_depth_limit(mc, HB_PROFILE_DEPTH_LIMIT);
	pcre2_set_heap_limit(mc, HB_PROFILE_HEAP_LIMIT_KIB);
	int m = pcre2_match(re, (PCRE2_SPTR)subject, PCRE2_ZERO_TERMINATED, 0, 0, md, mc);
	if (m >= 0) {
		rc = 1;
	} else if (m == PCRE2_ERROR_NOMATCH) {
		rc = 0;
	} else if (m == PCRE2_ERROR_MATCHLIMIT || m == PCRE2_ERROR_DEPTHLIMIT || m == PCRE2_ERROR_HEAPLIMIT) {
		snprintf(why, whylen, "the pattern gave up at its %s limit on '%s' (too much backtracking: simplify it)",
			 m == PCRE2_ERROR_MATCHLIMIT ? "match" : m == PCRE2_ERROR_DEPTHLIMIT ? "depth" : "heap",
			 subject);
		rc = HB_ERR_LIMIT;
	} else if (m == PCRE2_ERROR_NOMEMORY) {
		hb_set_err(why, whylen, "out of memory");
		rc = HB_ERR_NOMEM;
	} else {
		PCRE2_UCHAR msg[160];
		if (pcre2_get_error_message(m, msg, sizeof msg) < 0)
			snprintf((char *)msg, sizeof msg, "error %d", m);
		snprintf(why, whylen, "match failed: %s", (const char *)msg);
		rc = HB_ERR_LIMIT;
	}
cleanup:
	pcre2_match_data_free(md);
	pcre2_match_context_free(mc);
	return rc;
}

int hb_profile_match_check(const hb_profile *p, const hb_idn *idn, char *why, size_t whylen)
{
	if (!p || !idn || (!p->maker_re && !p->model_re))
		return 0;
	const pcre2_code *res[2] = { p->maker_re, p->model_re };
	const char *subjects[2] = { idn->maker, idn->model };
	const hb_pkey keys[2] = { HB_PK_MATCH_MAKER, HB_PK_MATCH_MODEL };
	for (int i = 0; i < 2; i++) {
		if (!res[i])
			continue;
		char msg[256];
		int rc = hb_profile_regex_match(res[i], subjects[i], msg, sizeof msg);
		if (rc < 0) {
			snprintf(why, whylen, "%s:%d: key '%s': %s", p->path ? p->path : "?", p->v[keys[i]].line,
				 hb_profile_key_name(keys[i]), msg);
			return rc;
		}
		if (rc == 0)
			return 0;
	}
	return 1;
}

bool hb_profile_matches(const hb_profile *p, const hb_idn *idn)
{
	char why[8];
	/* a pattern that gave up is no match; the search reports it */
	return hb_profile_match_check(p, idn, why, sizeof why) == 1;
}
