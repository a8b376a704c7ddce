/* src/station.h - the station file: who and where measures, and the bench's hard limits */
#ifndef HB_STATION_H
#define HB_STATION_H

#include <stddef.h>

typedef struct hb_station {
	char name[64];          /* [station] name; default: host name */
	char operator_name[64]; /* [station] operator; default: $USER */
	double max_current;     /* [limits] max_current, A; NAN = not set */
	double max_voltage;     /* [limits] max_voltage, V */
	double max_power;       /* [limits] max_power, W */
	double confirm_above;   /* [limits] confirm_above, A: ask before sweeping higher; NAN = never */
	double ramp_rate;       /* [limits] ramp_rate, A/s; NAN = engine default */
	double part_overdrive;  /* [limits] part_overdrive: a sweep may go to this many times the
	                         * part's highest rated current; default 2 */
	char path[512];         /* the file read, empty if none */
} hb_station;

/* Reads $HENRYBENCH_STATION or ${XDG_CONFIG_HOME:-~/.config}/henrybench/station.ini;
 * a missing file leaves the defaults. A malformed file is HB_ERR_ARG with
 * "FILE:LINE: ..." in err. */
int hb_station_load(hb_station *station, char *err, size_t errlen);
void hb_station_defaults(hb_station *station);

#endif
