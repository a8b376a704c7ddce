/* src/quality/switching.c - ISO 2859-1 clause 9 switching rules applied to a stream of decided lots (pure, no I/O) */
#include <stdio.h>
#include <string.h>

#include "switching.h"

static void set_text(char *dst, size_t cap, const char *src)
{
	snprintf(dst, cap, "%s", src ? src : "");
}

/* Entering a severity starts its counters afresh: the score is set to zero
 * at the start of normal inspection (9.3.3), the 2-of-5 window counts lots
 * on normal only, and the tightened counts start with tightened. */
static void enter(hb_switch_state *s, hb_severity sev, hb_switch_rule rule, const char *lot)
{
	s->severity = sev;
	s->discontinued = false;
	s->score = 0;
	s->normal_lots = 0;
	s->recent_bad = 0;
	memset(s->recent, 0, sizeof s->recent);
	s->tight_accepted_run = 0;
	s->tight_not_accepted = 0;
	s->rule = rule;
	set_text(s->since_lot, sizeof s->since_lot, lot);
}

void hb_switch_init(hb_switch_state *s)
{
	memset(s, 0, sizeof *s);
	enter(s, HB_SEVERITY_NORMAL, HB_SWITCH_START, "");
	set_text(s->why, sizeof s->why, "start of the lot stream: normal inspection (ISO 2859-1:1999 9.1; MIL-STD-105E 8.1)");
}

const char *hb_switch_rule_name(hb_switch_rule rule)
{
	switch (rule) {
	case HB_SWITCH_START: return "start";
	case HB_SWITCH_STAY: return "stay";
	case HB_SWITCH_TO_TIGHTENED: return "normal-to-tightened";
	case HB_SWITCH_TIGHTENED_TO_NORMAL: return "tightened-to-normal";
	case HB_SWITCH_TO_REDUCED: return "normal-to-reduced";
	case HB_SWITCH_REDUCED_REJECT: return "reduced-to-normal-rejected";
	case HB_SWITCH_REDUCED_REINSTATE: return "reduced-to-normal-reinstated";
	case HB_SWITCH_REDUCED_IRREGULAR: return "reduced-to-normal-irregular";
	case HB_SWITCH_REDUCED_WITHDRAWN: return "reduced-to-normal-withdrawn";
	case HB_SWITCH_DISCONTINUE: return "discontinue";
	case HB_SWITCH_RESUME: return "resume";
	case HB_SWITCH_OVERRIDE: return "override";
	}
	return "?";
}

const char *hb_switch_rule_clause(hb_switch_rule rule)
{
	switch (rule) {
	case HB_SWITCH_START: return "ISO 2859-1:1999 9.1; MIL-STD-105E 8.1";
	case HB_SWITCH_STAY: return "ISO 2859-1:1999 9.2; MIL-STD-105E 8.2";
	case HB_SWITCH_TO_TIGHTENED: return "ISO 2859-1:1999 9.3.1; MIL-STD-105E 8.3.1";
	case HB_SWITCH_TIGHTENED_TO_NORMAL: return "ISO 2859-1:1999 9.3.2; MIL-STD-105E 8.3.2";
	case HB_SWITCH_TO_REDUCED: return "ISO 2859-1:1999 9.3.3, switching score";
	case HB_SWITCH_REDUCED_REJECT: return "ISO 2859-1:1999 9.3.4 a); MIL-STD-105E 8.3.4";
	case HB_SWITCH_REDUCED_REINSTATE: return "MIL-STD-105E 8.3.4 and Table II-C; ANSI/ASQ Z1.4 10.1.4";
	case HB_SWITCH_REDUCED_IRREGULAR: return "ISO 2859-1:1999 9.3.4 b); MIL-STD-105E 8.3.4";
	case HB_SWITCH_REDUCED_WITHDRAWN: return "ISO 2859-1:1999 9.3.4 c); MIL-STD-105E 8.3.4";
	case HB_SWITCH_DISCONTINUE: return "ISO 2859-1:1999 9.4";
	case HB_SWITCH_RESUME: return "ISO 2859-1:1999 9.4";
	case HB_SWITCH_OVERRIDE: return "the responsible authority's choice";
	}
	return "";
}

static bool accepted(const hb_switch_lot *lot)
{
	return lot->decision == HB_LOT_ACCEPT || lot->decision == HB_LOT_ACCEPT_REINSTATE;
}

/* The switching score after one lot on normal inspection (ISO 2859-1:1999
 * 9.3.3, single sampling, from memory). */
static int score_after(int score, const hb_switch_lot *lot)
{
	if (!accepted(lot))
		return 0;
	if (lot->ac >= 2)
		/* "would have been accepted if the AQL had been one step tighter" */
		return lot->tighter_ac >= 0 && lot->nonconforming <= lot->tighter_ac ? score + 3 : 0;
	return score + 2;
}

static void say(hb_switch_state *s, hb_switch_rule rule, const char *fmt_lot, const char *detail)
{
	snprintf(s->why, sizeof s->why, "%s after lot %s: %s (%s)", hb_iso2859_severity_name(s->severity), fmt_lot,
		 detail, hb_switch_rule_clause(rule));
}

static int bits(unsigned v)
{
	int n = 0;
	for (; v; v >>= 1)
		n += (int)(v & 1u);
	return n;
}

static hb_switch_rule on_normal(hb_switch_state *s, const hb_switch_lot *lot)
{
	s->normal_lots++;
	s->score = score_after(s->score, lot);
	/* The window: the 5 or fewer consecutive lots on normal ending with this one. */
	s->recent_bad = ((s->recent_bad << 1) | (accepted(lot) ? 0u : 1u)) & ((1u << HB_SWITCH_WINDOW) - 1u);
	memmove(s->recent[1], s->recent[0], sizeof s->recent - sizeof s->recent[0]);
	set_text(s->recent[0], sizeof s->recent[0], lot->lot_code);
	int bad = bits(s->recent_bad);
	/* 2 of 5 or fewer consecutive lots not accepted on original inspection. */
	if (!accepted(lot) && bad >= 2) {
		char detail[300];
		size_t len = (size_t)snprintf(detail, sizeof detail, "lots");
		for (int i = HB_SWITCH_WINDOW - 1; i >= 0; i--)
			if (s->recent_bad & (1u << i))
				len += (size_t)snprintf(detail + len, len < sizeof detail ? sizeof detail - len : 0, " %s",
							s->recent[i]);
		if (len < sizeof detail)
			snprintf(detail + len, sizeof detail - len,
				 " not accepted on original inspection within %d consecutive lots",
				 s->normal_lots < HB_SWITCH_WINDOW ? s->normal_lots : HB_SWITCH_WINDOW);
		enter(s, HB_SEVERITY_TIGHTENED, HB_SWITCH_TO_TIGHTENED, lot->lot_code);
		say(s, HB_SWITCH_TO_TIGHTENED, lot->lot_code, detail);
		return HB_SWITCH_TO_TIGHTENED;
	}
	return HB_SWITCH_STAY;
}

static hb_switch_rule on_tightened(hb_switch_state *s, const hb_switch_lot *lot)
{
	if (accepted(lot)) {
		if (++s->tight_accepted_run >= HB_SWITCH_TIGHT_TO_NORMAL) {
			enter(s, HB_SEVERITY_NORMAL, HB_SWITCH_TIGHTENED_TO_NORMAL, lot->lot_code);
			say(s, HB_SWITCH_TIGHTENED_TO_NORMAL, lot->lot_code,
			    "5 consecutive lots accepted on original tightened inspection");
			return HB_SWITCH_TIGHTENED_TO_NORMAL;
		}
		return HB_SWITCH_STAY;
	}
	s->tight_accepted_run = 0;
	if (++s->tight_not_accepted >= HB_SWITCH_TIGHT_NOT_ACCEPTED) {
		s->discontinued = true;
		s->rule = HB_SWITCH_DISCONTINUE;
		set_text(s->since_lot, sizeof s->since_lot, lot->lot_code);
		snprintf(s->why, sizeof s->why,
			 "discontinued after lot %s: %d lots not accepted on tightened inspection (%s); no lot may be "
			 "inspected until the supplier's corrective action is recorded, then tightened inspection resumes",
			 lot->lot_code, s->tight_not_accepted, hb_switch_rule_clause(HB_SWITCH_DISCONTINUE));
		return HB_SWITCH_DISCONTINUE;
	}
	return HB_SWITCH_STAY;
}

static hb_switch_rule on_reduced(hb_switch_state *s, const hb_switch_lot *lot)
{
	hb_switch_rule rule = HB_SWITCH_STAY;
	const char *detail = NULL;
	if (lot->decision == HB_LOT_REJECT) {
		rule = HB_SWITCH_REDUCED_REJECT;
		detail = "the lot was not accepted on reduced inspection";
	} else if (lot->decision == HB_LOT_ACCEPT_REINSTATE) {
		rule = HB_SWITCH_REDUCED_REINSTATE;
		detail = "the lot was accepted with Ac < d < Re on reduced inspection: normal inspection reinstated";
	} else if (lot->irregular) {
		rule = HB_SWITCH_REDUCED_IRREGULAR;
		detail = "production was irregular or delayed";
	}
	if (rule == HB_SWITCH_STAY)
		return rule;
	enter(s, HB_SEVERITY_NORMAL, rule, lot->lot_code);
	say(s, rule, lot->lot_code, detail);
	return rule;
}

hb_switch_rule hb_switch_apply(hb_switch_state *s, const hb_switch_lot *lot)
{
	s->lots_seen++;
	hb_switch_rule entry = HB_SWITCH_STAY;
	if (s->discontinued || lot->severity != s->severity) {
		char detail[240];
		if (!s->discontinued && s->severity == HB_SEVERITY_NORMAL && lot->severity == HB_SEVERITY_REDUCED &&
		    s->score >= HB_SWITCH_SCORE_TO_REDUCED) {
			entry = HB_SWITCH_TO_REDUCED;
			snprintf(detail, sizeof detail,
				 "switching score %d >= %d, production steady, reduced inspection approved", s->score,
				 HB_SWITCH_SCORE_TO_REDUCED);
		} else if (!s->discontinued && s->severity == HB_SEVERITY_REDUCED && lot->severity == HB_SEVERITY_NORMAL &&
			   lot->irregular) {
			entry = HB_SWITCH_REDUCED_IRREGULAR;
			snprintf(detail, sizeof detail, "production irregular or delayed");
		} else {
			entry = HB_SWITCH_OVERRIDE;
			snprintf(detail, sizeof detail, "lot %s was inspected %s where the rules gave %s", lot->lot_code,
				 hb_iso2859_severity_name(lot->severity),
				 s->discontinued ? "none (discontinued)" : hb_iso2859_severity_name(s->severity));
		}
		enter(s, lot->severity, entry, lot->lot_code);
		snprintf(s->why, sizeof s->why, "%s from lot %s: %s (%s)", hb_iso2859_severity_name(s->severity),
			 lot->lot_code, detail, hb_switch_rule_clause(entry));
		if (entry == HB_SWITCH_REDUCED_IRREGULAR) {
			/* An irregular lot inspected on normal counts on normal. */
			on_normal(s, lot);
			return entry;
		}
	}
	hb_switch_rule rule = HB_SWITCH_STAY;
	switch (s->severity) {
	case HB_SEVERITY_NORMAL:
		rule = on_normal(s, lot);
		break;
	case HB_SEVERITY_TIGHTENED:
		rule = on_tightened(s, lot);
		break;
	case HB_SEVERITY_REDUCED:
		rule = on_reduced(s, lot);
		break;
	}
	return rule != HB_SWITCH_STAY ? rule : entry;
}

void hb_switch_resume(hb_switch_state *s, const char *note)
{
	if (!s->discontinued)
		return;
	enter(s, HB_SEVERITY_TIGHTENED, HB_SWITCH_RESUME, "");
	snprintf(s->why, sizeof s->why,
		 "tightened: inspection resumed after the supplier's corrective action (%s), as if the normal-to-tightened "
		 "rule had just fired (%s)",
		 note && *note ? note : "no note", hb_switch_rule_clause(HB_SWITCH_RESUME));
}

void hb_switch_withdraw(hb_switch_state *s, const char *note)
{
	if (s->discontinued || s->severity != HB_SEVERITY_REDUCED)
		return;
	enter(s, HB_SEVERITY_NORMAL, HB_SWITCH_REDUCED_WITHDRAWN, "");
	snprintf(s->why, sizeof s->why, "normal: the responsible authority withdrew reduced inspection (%s) (%s)",
		 note && *note ? note : "no note", hb_switch_rule_clause(HB_SWITCH_REDUCED_WITHDRAWN));
}

void hb_switch_next_of(const hb_switch_state *s, bool reduced_approved, bool steady, hb_switch_next *out)
{
	memset(out, 0, sizeof *out);
	out->severity = s->severity;
	out->discontinued = s->discontinued;
	out->rule = s->rule;
	set_text(out->why, sizeof out->why, s->why);
	if (s->discontinued) {
		snprintf(out->progress, sizeof out->progress, "discontinued: %d lots not accepted on tightened inspection",
			 s->tight_not_accepted);
		return;
	}
	switch (s->severity) {
	case HB_SEVERITY_NORMAL:
		if (s->score >= HB_SWITCH_SCORE_TO_REDUCED && reduced_approved && steady) {
			out->severity = HB_SEVERITY_REDUCED;
			out->rule = HB_SWITCH_TO_REDUCED;
			snprintf(out->why, sizeof out->why,
				 "reduced: switching score %d >= %d, production steady, reduced inspection approved (%s)",
				 s->score, HB_SWITCH_SCORE_TO_REDUCED, hb_switch_rule_clause(HB_SWITCH_TO_REDUCED));
		}
		snprintf(out->progress, sizeof out->progress,
			 "switching score %d of %d (reduced inspection %s%s); %s", s->score,
			 HB_SWITCH_SCORE_TO_REDUCED, reduced_approved ? "approved" : "not approved",
			 steady ? "" : ", production irregular",
			 (s->recent_bad & 0xFu) ? "2-of-5 rule: one more lot rejected within the window tightens" :
						  "2-of-5 rule: no lot rejected among the last 4 on normal");
		for (int i = 0; i < HB_SWITCH_WINDOW - 1; i++)
			if (s->recent_bad & (1u << i)) {
				size_t len = strlen(out->progress);
				snprintf(out->progress + len, sizeof out->progress - len, " (lot %s not accepted)",
					 s->recent[i]);
			}
		break;
	case HB_SEVERITY_TIGHTENED:
		snprintf(out->progress, sizeof out->progress,
			 "%d of %d consecutive lots accepted toward normal; %d of %d lots not accepted toward discontinuation",
			 s->tight_accepted_run, HB_SWITCH_TIGHT_TO_NORMAL, s->tight_not_accepted, HB_SWITCH_TIGHT_NOT_ACCEPTED);
		break;
	case HB_SEVERITY_REDUCED:
		if (!steady) {
			out->severity = HB_SEVERITY_NORMAL;
			out->rule = HB_SWITCH_REDUCED_IRREGULAR;
			snprintf(out->why, sizeof out->why, "normal: production irregular or delayed (%s)",
				 hb_switch_rule_clause(HB_SWITCH_REDUCED_IRREGULAR));
		} else if (!reduced_approved) {
			out->severity = HB_SEVERITY_NORMAL;
			out->rule = HB_SWITCH_REDUCED_WITHDRAWN;
			snprintf(out->why, sizeof out->why, "normal: reduced inspection is no longer approved (%s)",
				 hb_switch_rule_clause(HB_SWITCH_REDUCED_WITHDRAWN));
		}
		snprintf(out->progress, sizeof out->progress,
			 "reduced holds while lots are accepted with d <= Ac, production is steady and approval stands");
		break;
	}
}
