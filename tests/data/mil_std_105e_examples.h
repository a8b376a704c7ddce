/* tests/data/mil_std_105e_examples.h - the worked examples and table invariants of the verified MIL-STD-105E reference, copied for the sampling tests */
/*
 * Source: "MIL-STD-105E single-sampling tables - verified reference values"
 * (the project's verified reference data, sampling-tables-mil-std-105e.md),
 * section 5 "Worked examples (for tests)" and its "Suggested invariants",
 * copied here so the tests do not read outside the repository. Each example
 * names the sources that confirm it there (S1 ... S7: two CRAN packages, a
 * scan of MIL-STD-105E Table I / II-A, a MIL-STD-105E derived public
 * table, and three independent published programs). Example 22 is disputed
 * in the reference ("do not pin"): the tests check only that its plan is
 * flagged uncertain.
 */
#ifndef HB_TESTS_MIL_STD_105E_EXAMPLES_H
#define HB_TESTS_MIL_STD_105E_EXAMPLES_H

typedef struct ref_example {
	int number;
	long lot_size;
	const char *level;     /* "S-1" ... "III" */
	double aql;
	const char *severity;  /* "normal", "tightened", "reduced" */
	char initial_letter;   /* Table I */
	char letter;           /* the row of the plan used */
	int n, ac, re;
	int disputed;          /* the reference says: do not pin */
	const char *confirmed_by;
} ref_example;

static const ref_example ref_examples[] = {
	{ 1, 1000, "II", 1.0, "normal", 'J', 'J', 80, 2, 3, 0, "S1 S2 S3 S4 S5 S7" },
	{ 2, 1000, "II", 1.0, "tightened", 'J', 'J', 80, 1, 2, 0, "S1 S2 S4 S5 S7" },
	{ 3, 1000, "II", 1.0, "reduced", 'J', 'J', 32, 1, 3, 0, "S1 S2(Ac) S5" },
	{ 4, 5000, "II", 2.5, "normal", 'L', 'L', 200, 10, 11, 0, "S1 S2 S4 S5 S7" },
	{ 5, 5000, "II", 2.5, "tightened", 'L', 'L', 200, 8, 9, 0, "S1 S2 S4 S5 S7" },
	{ 6, 5000, "II", 2.5, "reduced", 'L', 'L', 80, 5, 8, 0, "S1 S2(Ac) S5 S6" },
	{ 7, 500, "II", 0.65, "normal", 'H', 'J', 80, 1, 2, 0, "S1 S3 S4 S5 S7" },
	{ 8, 200, "II", 0.65, "normal", 'G', 'F', 20, 0, 1, 0, "S1 S3 S4 S5 S7" },
	{ 9, 50, "II", 4.0, "normal", 'D', 'E', 13, 1, 2, 0, "S1 S4 S5 S7" },
	{ 10, 150, "II", 1.5, "tightened", 'F', 'H', 50, 1, 2, 0, "S1 S4 S7(Ac/Re)" },
	{ 11, 10000, "II", 1.0, "reduced", 'L', 'L', 80, 2, 5, 0, "S1 S2(Ac) S5" },
	{ 12, 3000, "II", 0.40, "reduced", 'K', 'K', 50, 0, 2, 0, "S1 S2(Ac) S5" },
	{ 13, 40000, "II", 0.065, "reduced", 'N', 'P', 315, 0, 2, 0, "S1 S5" },
	{ 14, 1200, "I", 4.0, "reduced", 'G', 'G', 13, 1, 4, 0, "S1 S2(Ac) S5" },
	{ 15, 50, "II", 6.5, "reduced", 'D', 'D', 3, 0, 2, 0, "S1 S2(Ac) S5" },
	{ 16, 20000, "S-1", 2.5, "normal", 'C', 'C', 5, 0, 1, 0, "S1 S4 S5 S7" },
	{ 17, 300, "S-4", 6.5, "tightened", 'E', 'E', 13, 1, 2, 0, "S1 S4 S5 S7" },
	{ 18, 8, "II", 6.5, "normal", 'A', 'A', 2, 0, 1, 0, "S1 S4 S5 S7" },
	{ 19, 600000, "III", 0.010, "normal", 'R', 'Q', 1250, 0, 1, 0, "S1 S5(Ac) S7" },
	{ 20, 600000, "III", 0.025, "tightened", 'R', 'S', 3150, 1, 2, 0, "S1 S5(Ac) S2; S7 disagrees (marked)" },
	{ 21, 100000, "II", 0.10, "tightened", 'N', 'P', 800, 1, 2, 0, "S1 S7(Ac/Re)" },
	{ 22, 8, "II", 10, "normal", 'A', 'C', 5, 1, 2, 1, "disputed: S1 C n 5 1/2; S4 prints an up arrow; S5 0/1" },
};

/* Invariants ("true in every verified source"): the Ac/Re pairs each row of
 * Table II-C may use. Rows C-R: */
static const int ref_reduced_pairs_c_to_r[][2] = { { 0, 1 }, { 0, 2 }, { 1, 3 }, { 1, 4 }, { 2, 5 }, { 3, 6 },
						   { 5, 8 }, { 7, 10 }, { 10, 13 }, { 14, 17 }, { 21, 24 } };
/* Row A: */
static const int ref_reduced_pairs_a[][2] = { { 0, 1 }, { 1, 2 }, { 2, 3 }, { 3, 4 }, { 5, 6 },
					      { 7, 8 }, { 10, 11 }, { 14, 15 }, { 21, 22 }, { 30, 31 } };
/* Row B: */
static const int ref_reduced_pairs_b[][2] = { { 0, 1 }, { 0, 2 }, { 1, 3 }, { 2, 4 }, { 3, 5 }, { 5, 6 },
					      { 7, 8 }, { 10, 11 }, { 14, 15 }, { 21, 22 }, { 30, 31 } };

#endif
