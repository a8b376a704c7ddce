/* tests/sim_witness.h - reading the simulator's log as the witness of what the supply did: switch-offs and set-points */
#ifndef HB_TEST_SIM_WITNESS_H
#define HB_TEST_SIM_WITNESS_H

/* Include after <cmocka.h>, <math.h>, <stdlib.h> and <string.h>. */

/* Every "supply output OFF at X A" of a simulator log (docs/simulator.md,
 * the log format): the real current at the instant the output went off
 * must be below the threshold. Returns how many switch-offs the log shows. */
static inline int witness_every_off_below(const char *log, double threshold)
{
	int n = 0;
	for (const char *p = log; (p = strstr(p, "supply output OFF")); p++) {
		const char *at = strstr(p, " at ");
		const char *eol = strchr(p, '\n');
		/* The witness must say what flowed, on the same line. */
		assert_true(at && (!eol || at < eol));
		double amps = atof(at + 4);
		if (fabs(amps) >= threshold)
			print_error("output switched off with %.4f A flowing\n", amps);
		assert_true(fabs(amps) < threshold);
		n++;
	}
	return n;
}

/* The set-points logged after `from`, in order ("supply setpoint X A"). */
static inline int witness_setpoints_after(const char *from, double *out, int cap)
{
	int n = 0;
	for (const char *p = from; (p = strstr(p, "supply setpoint ")) && n < cap; p++)
		out[n++] = atof(p + strlen("supply setpoint "));
	return n;
}

#endif
