/* src/quality/quality.h - the quality room's public face: sampling plans, statistics, verdicts, a sweep analysed, a lot inspected, a part's history */
#ifndef HB_QUALITY_H
#define HB_QUALITY_H

/*
 * The rooms above (io, report, cli) include this header only. The parts, in
 * the order each builds on the one before:
 */
#include "rules.h"    /* ISO 2859-1 plans, capability statistics, part verdicts (pure, no I/O) */
#include "analysis.h" /* a stored sweep fitted, the fit stored, the unit judged (db + fit) */
#include "history.h"  /* a part's lots summarised: statistics, capability, trend */
#include "inspect.h"  /* a lot inspected at the bench (measures through bench/) */
#include "switching.h" /* ISO 2859-1 clause 9 switching rules over a stream of lots (pure) */
#include "stream.h"   /* a part's lot stream from one supplier, replayed from the store */
#include "design_store.h" /* the design inverse's inputs from the store: core fit and core */

#endif
