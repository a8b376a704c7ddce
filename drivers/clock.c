/* drivers/clock.c - the bench clock: wall time on hardware, the simulated bench's time when it runs virtually */
#include <time.h>

#include "hb_drivers.h"

static hb_clock_ops installed;

static double wall_now(void)
{
	struct timespec ts;
	clock_gettime(CLOCK_MONOTONIC, &ts);
	return (double)ts.tv_sec + ts.tv_nsec * 1e-9;
}

double hb_clock_now(void)
{
	if (installed.now)
		return installed.now(installed.ctx);
	return wall_now();
}

int hb_clock_sleep(double seconds, volatile sig_atomic_t *stop)
{
	if (installed.sleep)
		return installed.sleep(installed.ctx, seconds, stop);
	/* Short slices so a signal is seen within 20 ms. */
	double end = wall_now() + seconds;
	for (;;) {
		if (stop && *stop)
			return HB_ERR_INTERRUPTED;
		double left = end - wall_now();
		if (left <= 0)
			return HB_OK;
		double slice = left < 0.02 ? left : 0.02;
		struct timespec ts = { (time_t)slice, (long)((slice - (time_t)slice) * 1e9) };
		nanosleep(&ts, NULL);
	}
}

void hb_clock_install(const hb_clock_ops *ops)
{
	if (ops)
		installed = *ops;
	else
		installed = (hb_clock_ops){ 0 };
}
