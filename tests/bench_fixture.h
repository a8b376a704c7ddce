/* tests/bench_fixture.h - fixtures shared by the instrument driver tests: a quick in-process simulated bench and a scripted peer that must have heard its whole script */
#ifndef HB_TEST_BENCH_FIXTURE_H
#define HB_TEST_BENCH_FIXTURE_H

/* Include after <cmocka.h>: the fixtures assert. */
#include <stdlib.h>

#include "drivers/hb_drivers.h"
#include "scripted_peer.h"

/* SCPI's reply to SYST:ERR? when the error queue is empty. */
#define OK_ERR "0,\"No error\"\n"

/* Group setup: the user's own profiles must not change what these tests see,
 * and simulated integration and settling times shrink a thousandfold so the
 * suite stays quick; the protocol is unchanged. */
static inline int bench_fixture_setup(void **state)
{
	(void)state;
	unsetenv("HENRYBENCH_PROFILE_PATH");
	hb_sim *sim = hb_sim_inproc();
	assert_non_null(sim);
	assert_int_equal(hb_sim_set_param(sim, "time_scale", 1e-3), HB_OK);
	return 0;
}

static inline int bench_fixture_teardown(void **state)
{
	(void)state;
	hb_sim_inproc_shutdown();
	return 0;
}

/* Call after the driver closed its end: a peer that heard anything other
 * than its script names the first difference. */
static inline void bench_peer_finish(peer *p)
{
	peer_finish(p);
	if (p->mismatches)
		print_error("%s\n", p->mismatch);
	assert_int_equal(p->mismatches, 0);
}

#endif
