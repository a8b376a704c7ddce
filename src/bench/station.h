/* src/bench/station.h - the station file: who and where measures, and the bench's hard limits */
#ifndef HB_STATION_H
#define HB_STATION_H

#include <stdbool.h>
#include <stddef.h>

#include "../../drivers/hb_drivers.h" /* hb_accuracy */

/* A saturation characterisation runs well past the knee: 2.5 x covers the
 * demo part's documented range (HBX-108G, saturation-spec 3.2 A, swept to
 * 8 A in the README and by `henrybench demo`). */
#define HB_STATION_PART_OVERDRIVE 2.5
/* Default shut-down confirm threshold, A. */
#define HB_STATION_OFF_THRESHOLD 0.02

typedef struct hb_station {
	char name[64];          /* [station] name; default: host name */
	char operator_name[64]; /* [station] operator; default: $USER, else the account name, else "-" */
	double max_current;     /* [limits] max_current, A; NAN = not set */
	double max_voltage;     /* [limits] max_voltage, V */
	double max_power;       /* [limits] max_power, W */
	double confirm_above;   /* [limits] confirm_above, A: ask before sweeping higher; NAN = never */
	double ramp_rate;       /* [limits] ramp_rate, A/s; NAN = engine default */
	double off_threshold;   /* [limits] off_threshold, A: the output may be switched off only once
	                         * the current has decayed below it; NAN = default (20 mA) */
	double part_overdrive;  /* [limits] part_overdrive: a sweep may go to this many times the
	                         * part's highest rated current; default HB_STATION_PART_OVERDRIVE */
	bool part_overdrive_set; /* part_overdrive came from the file, not the default */
	bool lock_limits;       /* [limits] lock_limits = yes: no limit option on the command line */
	/* [accuracy] meter, meter.freq_above, supply.current: override the
	 * profiles' specifications for this station's instruments (rel NAN = not set) */
	hb_accuracy meter_accuracy, supply_accuracy;
	/* [station] decision_rule = simple | guarded | non-binary, guard_r: the
	 * default rule for parts that state none ("" = simple) */
	char decision_rule[16];
	double guard_r;         /* NAN = 1 */
	char path[512];         /* the file read, empty if none */
	/* [store] (docs/store.md, "Many stations"): path = the station's store when neither --db nor
	 * $HENRYBENCH_DB names one (relative to the station file's directory); server = the shared
	 * server's URL for `sync` when neither --server nor $HENRYBENCH_SERVER names one; sync =
	 * after-sweep pushes after every stored sweep (and inspected unit), manual (default) does not */
	char store_path[1024];  /* "" = not set */
	char server[1024];      /* "" = not set */
	bool sync_after_sweep;
	/* traceability (docs/traceability.md) */
	bool refuse_overdue;    /* [calibration] overdue = refuse: no sweep with an instrument past its due date
	                         * unless --allow-overdue; default warn */
	double fixture_max_age_h; /* [fixture] max_age_hours: older compensations are stale; NAN = HB_FIXTURE_MAX_AGE_HOURS */
	/* $USER unusable as the default operator (control characters, not
	 * UTF-8, too long): why, and what was recorded instead; "" = none.
	 * hb_station_load says it on stderr. */
	char operator_warning[256];
} hb_station;

/* Reads $HENRYBENCH_STATION or ${XDG_CONFIG_HOME:-~/.config}/henrybench/station.ini;
 * a missing file leaves the defaults. A malformed file is HB_ERR_ARG with
 * "FILE:LINE: ..." in err. */
int hb_station_load(hb_station *station, char *err, size_t errlen);
void hb_station_defaults(hb_station *station);
/* hb_station_load without the operator warning: for reading the [store] section before any command. */
int hb_station_read(hb_station *station, char *err, size_t errlen);

#endif
