/* src/quality/switching.h - the switching rules of ISO 2859-1 clause 9 (MIL-STD-105E 8.3) over a stream of lots: normal, tightened, reduced, discontinued */
#ifndef HB_SWITCHING_H
#define HB_SWITCHING_H

#include <stdbool.h>
#include <stddef.h>

#include "rules.h"

/*
 * The rules, as applied here (the clause numbers and wording are from
 * memory: the project's verified reference covers the tables, not clause 9;
 * docs/sampling.md):
 *  - start: normal inspection (ISO 2859-1:1999 9.1; MIL-STD-105E 8.1);
 *  - normal -> tightened when 2 of 5 or fewer consecutive lots are not
 *    accepted on original inspection (9.3.1; 105E 8.3.1);
 *  - tightened -> normal after 5 consecutive lots accepted on original
 *    inspection (9.3.2; 105E 8.3.2);
 *  - normal -> reduced when the switching score is at least 30, production
 *    is steady and the responsible authority approves (ISO 2859-1:1999
 *    9.3.3; the score from memory: it starts at 0 on normal; a lot of a plan
 *    with Ac >= 2 adds 3 when it would have been accepted at the AQL one step
 *    tighter, else resets it to 0; a lot of a plan with Ac 0 or 1 adds 2 when
 *    accepted, else resets it to 0);
 *  - reduced -> normal when a lot is not accepted, when a lot is accepted
 *    with Ac < d < Re (MIL-STD-105E reduced table; ANSI/ASQ Z1.4 10.1.4),
 *    when production is irregular or delayed, or when other conditions
 *    warrant, here the authority withdrawing its approval (9.3.4; 105E 8.3.4);
 *  - discontinue when 5 lots in a sequence of consecutive lots on tightened
 *    inspection are not accepted (ISO 2859-1:1999 9.4); resume only after the
 *    supplier's corrective action, on tightened inspection, as if 9.3.1 had
 *    just been invoked.
 */

/* The score that opens reduced inspection (ISO 2859-1:1999 9.3.3, from memory). */
enum { HB_SWITCH_SCORE_TO_REDUCED = 30 };
/* Lots within which 2 rejections tighten; accepted lots that restore
 * normal; lots not accepted on tightened that discontinue. */
enum { HB_SWITCH_WINDOW = 5, HB_SWITCH_TIGHT_TO_NORMAL = 5, HB_SWITCH_TIGHT_NOT_ACCEPTED = 5 };

typedef enum hb_switch_rule {
	HB_SWITCH_START,              /* 9.1: a stream starts on normal */
	HB_SWITCH_STAY,               /* no rule fired */
	HB_SWITCH_TO_TIGHTENED,       /* 9.3.1 */
	HB_SWITCH_TIGHTENED_TO_NORMAL, /* 9.3.2 */
	HB_SWITCH_TO_REDUCED,         /* 9.3.3 */
	HB_SWITCH_REDUCED_REJECT,     /* 9.3.4 a) */
	HB_SWITCH_REDUCED_REINSTATE,  /* 105E Table II-C: accepted with Ac < d < Re */
	HB_SWITCH_REDUCED_IRREGULAR,  /* 9.3.4 b) */
	HB_SWITCH_REDUCED_WITHDRAWN,  /* 9.3.4 c): the authority withdrew its approval */
	HB_SWITCH_DISCONTINUE,        /* 9.4 */
	HB_SWITCH_RESUME,             /* 9.4: resumed on tightened after corrective action */
	HB_SWITCH_OVERRIDE,           /* the lot was inspected at a severity the rules did not give */
} hb_switch_rule;

/* One decided lot as the rules see it. */
typedef struct hb_switch_lot {
	char lot_code[64];
	hb_severity severity;      /* the severity it was inspected under */
	hb_lot_decision decision;  /* HB_LOT_ACCEPT, _REJECT or _ACCEPT_REINSTATE */
	int nonconforming;         /* d in its sample */
	int ac;                    /* of its plan */
	int tighter_ac;            /* hb_iso2859_tighter_ac of its plan; -1 none */
	bool irregular;            /* production flagged irregular or delayed for this lot */
} hb_switch_lot;

typedef struct hb_switch_state {
	hb_severity severity;      /* the severity the rules give the next lot (normal -> reduced aside:
				    * that step needs the approval, see hb_switch_next) */
	bool discontinued;
	int score;                 /* switching score; counts on normal only */
	int normal_lots;           /* lots on normal since normal began */
	unsigned recent_bad;       /* the last 5 lots on normal (bit 0 the latest): 1 = not accepted */
	char recent[5][64];        /* their lot codes, recent[0] the latest */
	int tight_accepted_run;    /* consecutive accepted on tightened */
	int tight_not_accepted;    /* lots not accepted since tightened began */
	int lots_seen;
	hb_switch_rule rule;       /* the rule that set the present severity */
	char since_lot[64];        /* the lot (or event) after which it was set; "" at the start */
	char why[400];             /* that rule, in words, with its clause */
} hb_switch_state;

void hb_switch_init(hb_switch_state *s);
/*
 * Applies one decided lot. When the lot was inspected at a severity the
 * state did not give, the recorded severity wins: normal -> reduced with a
 * score of 30 or more is the approved switch; reduced -> normal on a lot
 * flagged irregular is 9.3.4 b); anything else is recorded as an override
 * and the rules restart from that severity. Returns the rule that fired
 * (HB_SWITCH_STAY when none).
 */
hb_switch_rule hb_switch_apply(hb_switch_state *s, const hb_switch_lot *lot);
/* The supplier's corrective action recorded after a discontinuation: tightened, counts from zero. */
void hb_switch_resume(hb_switch_state *s, const char *note);
/* The authority withdrew its approval of reduced inspection: a reduced stream returns to normal. */
void hb_switch_withdraw(hb_switch_state *s, const char *note);

typedef struct hb_switch_next {
	hb_severity severity;      /* the next lot's severity */
	bool discontinued;         /* no lot may be inspected until resumed */
	hb_switch_rule rule;       /* why */
	char why[400];
	char progress[300];        /* where the counters stand toward the next switch */
} hb_switch_next;

/* The next lot's severity: the state's, or reduced when the state is
 * normal, the score has reached 30, production is steady and reduced
 * inspection is approved. */
void hb_switch_next_of(const hb_switch_state *s, bool reduced_approved, bool steady, hb_switch_next *out);

/* "start", "stay", "normal-to-tightened", ... (stable, for JSON). */
const char *hb_switch_rule_name(hb_switch_rule rule);
/* The clause(s) that state the rule: "ISO 2859-1:1999 9.3.1; MIL-STD-105E 8.3.1". */
const char *hb_switch_rule_clause(hb_switch_rule rule);

#endif
