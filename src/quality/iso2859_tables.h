/* src/quality/iso2859_tables.h - the single-sampling tables of MIL-STD-105E (= ISO 2859-1:1989 for these tables), shared by rules.c only */
#ifndef HB_ISO2859_TABLES_H
#define HB_ISO2859_TABLES_H

enum { ISO2859_N_AQL = 26, ISO2859_N_ROWS = 16, ISO2859_N_ROWS_TIGHT = 17 };

/* ac of a cell that is not a plan: DN use the first plan below (larger n),
 * UP the first plan above, NO no entry (tightened row S outside AQL 0.025). */
enum { ISO2859_DN = -1, ISO2859_UP = -2, ISO2859_NO = -3 };

/*
 * Marks the verified reference puts on a cell where its sources disagree
 * (docs/sampling.md, "Cells that remain uncertain"):
 *  EDGE  the arrow pattern runs off the printed table (A at AQL 10, R at 0.015);
 *  SROW  tightened Q/R at 0.025: one source gives 0/1, three the S row's 1/2;
 *  RE    reduced rows L-R, Ac 3, 5, 7: Re rests on one source and the pattern;
 *  SIMPL tightened arrows next to the 0/1 diagonal that some sources simplify
 *        to 0/1; the arrow is confirmed, so this one is not uncertain.
 */
enum { ISO2859_M_EDGE = 1, ISO2859_M_SROW = 2, ISO2859_M_RE = 4, ISO2859_M_SIMPL = 8 };
enum { ISO2859_M_UNCERTAIN = ISO2859_M_EDGE | ISO2859_M_SROW | ISO2859_M_RE };

typedef struct iso2859_cell {
	signed char ac; /* acceptance number, or ISO2859_DN / _UP / _NO */
	signed char re; /* rejection number of a plan; 0 for an arrow */
	unsigned char mark;
} iso2859_cell;

extern const iso2859_cell iso2859_normal[ISO2859_N_ROWS][ISO2859_N_AQL];
extern const iso2859_cell iso2859_tightened[ISO2859_N_ROWS_TIGHT][ISO2859_N_AQL];
extern const iso2859_cell iso2859_reduced[ISO2859_N_ROWS][ISO2859_N_AQL];
extern const long iso2859_size_normal[ISO2859_N_ROWS];
extern const long iso2859_size_tightened[ISO2859_N_ROWS_TIGHT];
extern const long iso2859_size_reduced[ISO2859_N_ROWS];

#endif
