/* src/bench/bench.h - the bench room's public face: sweep engine, session into the store, station file */
#ifndef HB_BENCH_H
#define HB_BENCH_H

/*
 * What the rooms above (quality, cli) may use of the bench. The supply's
 * state machine (bias_supply.h) is not here on purpose: only the sweep
 * engine changes a supply, so nothing outside this room can.
 */
#include "station.h" /* who and where measures; the bench's hard limits */
#include "sweep.h"   /* plans, stepping, settling, the one safe shut-down path */
#include "session.h" /* one measured sweep from start to store */
#include "profile_check.h" /* a profile tried against its instrument (bring-up) */
#include "traceability.h" /* instrument register, calibration status, fixture compensation */

#endif
