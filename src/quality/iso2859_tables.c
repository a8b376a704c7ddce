/* src/quality/iso2859_tables.c - MIL-STD-105E Tables II-A, II-B, II-C (single sampling), cell by cell from the verified reference */
#include "iso2859_tables.h"

/*
 * Source: MIL-STD-105E (10 May 1989, public domain, Distribution Statement
 * A), Tables II-A (normal), II-B (tightened) and II-C (reduced), single
 * sampling, as given in the project's verified reference data
 * "MIL-STD-105E single-sampling tables - verified reference values"
 * (sampling-tables-mil-std-105e.md and .json): Table I and the three tables
 * reconstructed from one complete machine-readable source and checked cell
 * by cell against six more independent ones, one of them a scan of the
 * standard. ISO 2859-1:1989 and ANSI/ASQ Z1.4 print the same single
 * sampling plans. The reduced table is 105E's: some plans have Re - Ac up to
 * 3 (0/2, 1/3, 1/4, 2/5, 3/6, 5/8, 7/10, 10/13, 14/17, 21/24), and a lot
 * with Ac < d < Re is accepted but normal inspection is reinstated.
 * ISO 2859-1:1999 changed the reduced table (Re = Ac + 1); that table is
 * not verified here (docs/sampling.md).
 *
 * Cells: P(ac, re) a plan; DN / UP an arrow (use the first plan below /
 * above in the same column; the sample size is that row's); NO no entry.
 * The marks (iso2859_tables.h) carry the reference's doubts to `plan`.
 */
#define P(a, r) { (a), (r), 0 }
#define PM(a, r, m) { (a), (r), (m) }
#define DN { ISO2859_DN, 0, 0 }
#define UP { ISO2859_UP, 0, 0 }
#define NO { ISO2859_NO, 0, 0 }
#define DM(m) { ISO2859_DN, 0, (m) }
#define UM(m) { ISO2859_UP, 0, (m) }
#define M_EDGE ISO2859_M_EDGE
#define M_SROW ISO2859_M_SROW
#define M_RE ISO2859_M_RE
#define M_SIMPL ISO2859_M_SIMPL

/* Sample size of each code letter row (A ... R, tightened also S). */
const long iso2859_size_normal[ISO2859_N_ROWS] = { 2, 3, 5, 8, 13, 20, 32, 50, 80, 125, 200, 315, 500, 800, 1250, 2000 };
const long iso2859_size_tightened[ISO2859_N_ROWS_TIGHT] = { 2,   3,   5,   8,   13,  20,   32,   50,  80,
							    125, 200, 315, 500, 800, 1250, 2000, 3150 };
/* Two letters behind normal, never below 2. */
const long iso2859_size_reduced[ISO2859_N_ROWS] = { 2, 2, 2, 3, 5, 8, 13, 20, 32, 50, 80, 125, 200, 315, 500, 800 };

/* Columns: AQL 0.010 0.015 0.025 0.040 0.065 0.10 0.15 0.25 0.40 0.65 1.0 1.5
 * 2.5 4.0 6.5 10 15 25 40 65 100 150 250 400 650 1000. */

/* Table II-A, normal. */
const iso2859_cell iso2859_normal[ISO2859_N_ROWS][ISO2859_N_AQL] = {
	/* A */ { DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, P(0,1), DM(M_EDGE), DN, P(1,2), P(2,3), P(3,4), P(5,6), P(7,8), P(10,11), P(14,15), P(21,22), P(30,31) },
	/* B */ { DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, P(0,1), UP, DN, P(1,2), P(2,3), P(3,4), P(5,6), P(7,8), P(10,11), P(14,15), P(21,22), P(30,31), P(44,45) },
	/* C */ { DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, P(0,1), UP, DN, P(1,2), P(2,3), P(3,4), P(5,6), P(7,8), P(10,11), P(14,15), P(21,22), P(30,31), P(44,45), UP },
	/* D */ { DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, P(0,1), UP, DN, P(1,2), P(2,3), P(3,4), P(5,6), P(7,8), P(10,11), P(14,15), P(21,22), P(30,31), P(44,45), UP, UP },
	/* E */ { DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, P(0,1), UP, DN, P(1,2), P(2,3), P(3,4), P(5,6), P(7,8), P(10,11), P(14,15), P(21,22), P(30,31), P(44,45), UP, UP, UP },
	/* F */ { DN, DN, DN, DN, DN, DN, DN, DN, DN, P(0,1), UP, DN, P(1,2), P(2,3), P(3,4), P(5,6), P(7,8), P(10,11), P(14,15), P(21,22), UP, UP, UP, UP, UP, UP },
	/* G */ { DN, DN, DN, DN, DN, DN, DN, DN, P(0,1), UP, DN, P(1,2), P(2,3), P(3,4), P(5,6), P(7,8), P(10,11), P(14,15), P(21,22), UP, UP, UP, UP, UP, UP, UP },
	/* H */ { DN, DN, DN, DN, DN, DN, DN, P(0,1), UP, DN, P(1,2), P(2,3), P(3,4), P(5,6), P(7,8), P(10,11), P(14,15), P(21,22), UP, UP, UP, UP, UP, UP, UP, UP },
	/* J */ { DN, DN, DN, DN, DN, DN, P(0,1), UP, DN, P(1,2), P(2,3), P(3,4), P(5,6), P(7,8), P(10,11), P(14,15), P(21,22), UP, UP, UP, UP, UP, UP, UP, UP, UP },
	/* K */ { DN, DN, DN, DN, DN, P(0,1), UP, DN, P(1,2), P(2,3), P(3,4), P(5,6), P(7,8), P(10,11), P(14,15), P(21,22), UP, UP, UP, UP, UP, UP, UP, UP, UP, UP },
	/* L */ { DN, DN, DN, DN, P(0,1), UP, DN, P(1,2), P(2,3), P(3,4), P(5,6), P(7,8), P(10,11), P(14,15), P(21,22), UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP },
	/* M */ { DN, DN, DN, P(0,1), UP, DN, P(1,2), P(2,3), P(3,4), P(5,6), P(7,8), P(10,11), P(14,15), P(21,22), UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP },
	/* N */ { DN, DN, P(0,1), UP, DN, P(1,2), P(2,3), P(3,4), P(5,6), P(7,8), P(10,11), P(14,15), P(21,22), UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP },
	/* P */ { DN, P(0,1), UP, DN, P(1,2), P(2,3), P(3,4), P(5,6), P(7,8), P(10,11), P(14,15), P(21,22), UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP },
	/* Q */ { P(0,1), UP, DN, P(1,2), P(2,3), P(3,4), P(5,6), P(7,8), P(10,11), P(14,15), P(21,22), UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP },
	/* R */ { UP, UM(M_EDGE), P(1,2), P(2,3), P(3,4), P(5,6), P(7,8), P(10,11), P(14,15), P(21,22), UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP },
};

/* Table II-B, tightened; row S (n = 3150) holds one plan, at AQL 0.025. */
const iso2859_cell iso2859_tightened[ISO2859_N_ROWS_TIGHT][ISO2859_N_AQL] = {
	/* A */ { DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, DM(M_SIMPL), DM(M_SIMPL), DM(M_SIMPL), P(1,2), P(2,3), P(3,4), P(5,6), P(8,9), P(12,13), P(18,19), P(27,28) },
	/* B */ { DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, P(0,1), DM(M_SIMPL), DM(M_SIMPL), P(1,2), P(2,3), P(3,4), P(5,6), P(8,9), P(12,13), P(18,19), P(27,28), P(41,42) },
	/* C */ { DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, P(0,1), DM(M_SIMPL), DM(M_SIMPL), P(1,2), P(2,3), P(3,4), P(5,6), P(8,9), P(12,13), P(18,19), P(27,28), P(41,42), UP },
	/* D */ { DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, P(0,1), DM(M_SIMPL), DM(M_SIMPL), P(1,2), P(2,3), P(3,4), P(5,6), P(8,9), P(12,13), P(18,19), P(27,28), P(41,42), UP, UP },
	/* E */ { DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, P(0,1), DM(M_SIMPL), DM(M_SIMPL), P(1,2), P(2,3), P(3,4), P(5,6), P(8,9), P(12,13), P(18,19), P(27,28), P(41,42), UP, UP, UP },
	/* F */ { DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, P(0,1), DM(M_SIMPL), DM(M_SIMPL), P(1,2), P(2,3), P(3,4), P(5,6), P(8,9), P(12,13), P(18,19), UP, UP, UP, UP, UP, UP },
	/* G */ { DN, DN, DN, DN, DN, DN, DN, DN, DN, P(0,1), DM(M_SIMPL), DM(M_SIMPL), P(1,2), P(2,3), P(3,4), P(5,6), P(8,9), P(12,13), P(18,19), UP, UP, UP, UP, UP, UP, UP },
	/* H */ { DN, DN, DN, DN, DN, DN, DN, DN, P(0,1), DM(M_SIMPL), DM(M_SIMPL), P(1,2), P(2,3), P(3,4), P(5,6), P(8,9), P(12,13), P(18,19), UP, UP, UP, UP, UP, UP, UP, UP },
	/* J */ { DN, DN, DN, DN, DN, DN, DN, P(0,1), DM(M_SIMPL), DM(M_SIMPL), P(1,2), P(2,3), P(3,4), P(5,6), P(8,9), P(12,13), P(18,19), UP, UP, UP, UP, UP, UP, UP, UP, UP },
	/* K */ { DN, DN, DN, DN, DN, DN, P(0,1), DM(M_SIMPL), DM(M_SIMPL), P(1,2), P(2,3), P(3,4), P(5,6), P(8,9), P(12,13), P(18,19), UP, UP, UP, UP, UP, UP, UP, UP, UP, UP },
	/* L */ { DN, DN, DN, DN, DN, P(0,1), DM(M_SIMPL), DM(M_SIMPL), P(1,2), P(2,3), P(3,4), P(5,6), P(8,9), P(12,13), P(18,19), UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP },
	/* M */ { DN, DN, DN, DN, P(0,1), DM(M_SIMPL), DM(M_SIMPL), P(1,2), P(2,3), P(3,4), P(5,6), P(8,9), P(12,13), P(18,19), UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP },
	/* N */ { DN, DN, DN, P(0,1), DM(M_SIMPL), DM(M_SIMPL), P(1,2), P(2,3), P(3,4), P(5,6), P(8,9), P(12,13), P(18,19), UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP },
	/* P */ { DN, DN, P(0,1), DM(M_SIMPL), DM(M_SIMPL), P(1,2), P(2,3), P(3,4), P(5,6), P(8,9), P(12,13), P(18,19), UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP },
	/* Q */ { DN, P(0,1), DM(M_SROW|M_SIMPL), DM(M_SIMPL), P(1,2), P(2,3), P(3,4), P(5,6), P(8,9), P(12,13), P(18,19), UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP },
	/* R */ { P(0,1), UM(M_EDGE), DM(M_SROW|M_SIMPL), P(1,2), P(2,3), P(3,4), P(5,6), P(8,9), P(12,13), P(18,19), UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP },
	/* S */ { NO, NO, P(1,2), NO, NO, NO, NO, NO, NO, NO, NO, NO, NO, NO, NO, NO, NO, NO, NO, NO, NO, NO, NO, NO, NO, NO },
};

/* Table II-C, reduced (105E form: Re - Ac up to 3). Rows A-C all have n = 2, so
 * their arrows follow Table II-A (the reference confirms this at AQL 2.5). */
const iso2859_cell iso2859_reduced[ISO2859_N_ROWS][ISO2859_N_AQL] = {
	/* A */ { DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, P(0,1), DM(M_EDGE), DN, P(1,2), P(2,3), P(3,4), P(5,6), P(7,8), P(10,11), P(14,15), P(21,22), P(30,31) },
	/* B */ { DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, P(0,1), UP, DN, P(0,2), P(1,3), P(2,4), P(3,5), P(5,6), P(7,8), P(10,11), P(14,15), P(21,22), P(30,31) },
	/* C */ { DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, P(0,1), UP, DN, P(0,2), P(1,3), P(1,4), P(2,5), P(3,6), P(5,8), P(7,10), P(10,13), P(14,17), P(21,24), UP },
	/* D */ { DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, P(0,1), UP, DN, P(0,2), P(1,3), P(1,4), P(2,5), P(3,6), P(5,8), P(7,10), P(10,13), P(14,17), P(21,24), UP, UP },
	/* E */ { DN, DN, DN, DN, DN, DN, DN, DN, DN, DN, P(0,1), UP, DN, P(0,2), P(1,3), P(1,4), P(2,5), P(3,6), P(5,8), P(7,10), P(10,13), P(14,17), P(21,24), UP, UP, UP },
	/* F */ { DN, DN, DN, DN, DN, DN, DN, DN, DN, P(0,1), UP, DN, P(0,2), P(1,3), P(1,4), P(2,5), P(3,6), P(5,8), P(7,10), P(10,13), UP, UP, UP, UP, UP, UP },
	/* G */ { DN, DN, DN, DN, DN, DN, DN, DN, P(0,1), UP, DN, P(0,2), P(1,3), P(1,4), P(2,5), P(3,6), P(5,8), P(7,10), P(10,13), UP, UP, UP, UP, UP, UP, UP },
	/* H */ { DN, DN, DN, DN, DN, DN, DN, P(0,1), UP, DN, P(0,2), P(1,3), P(1,4), P(2,5), P(3,6), P(5,8), P(7,10), P(10,13), UP, UP, UP, UP, UP, UP, UP, UP },
	/* J */ { DN, DN, DN, DN, DN, DN, P(0,1), UP, DN, P(0,2), P(1,3), P(1,4), P(2,5), P(3,6), P(5,8), P(7,10), P(10,13), UP, UP, UP, UP, UP, UP, UP, UP, UP },
	/* K */ { DN, DN, DN, DN, DN, P(0,1), UP, DN, P(0,2), P(1,3), P(1,4), P(2,5), P(3,6), P(5,8), P(7,10), P(10,13), UP, UP, UP, UP, UP, UP, UP, UP, UP, UP },
	/* L */ { DN, DN, DN, DN, P(0,1), UP, DN, P(0,2), P(1,3), P(1,4), P(2,5), PM(3,6,M_RE), P(5,8), P(7,10), P(10,13), UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP },
	/* M */ { DN, DN, DN, P(0,1), UP, DN, P(0,2), P(1,3), P(1,4), P(2,5), PM(3,6,M_RE), PM(5,8,M_RE), P(7,10), P(10,13), UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP },
	/* N */ { DN, DN, P(0,1), UP, DN, P(0,2), P(1,3), P(1,4), P(2,5), PM(3,6,M_RE), PM(5,8,M_RE), PM(7,10,M_RE), P(10,13), UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP },
	/* P */ { DN, P(0,1), UP, DN, P(0,2), P(1,3), P(1,4), P(2,5), PM(3,6,M_RE), PM(5,8,M_RE), PM(7,10,M_RE), P(10,13), UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP },
	/* Q */ { P(0,1), UP, DN, P(0,2), P(1,3), P(1,4), P(2,5), PM(3,6,M_RE), PM(5,8,M_RE), PM(7,10,M_RE), P(10,13), UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP },
	/* R */ { UP, UM(M_EDGE), P(0,2), P(1,3), P(1,4), P(2,5), PM(3,6,M_RE), PM(5,8,M_RE), PM(7,10,M_RE), P(10,13), UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP, UP },
};
