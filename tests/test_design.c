/* tests/test_design.c - fit/design.c: the gap (or turns) for a target L at a current, round trip through the simulator's part and the independent physics of tests/truth_model.h */
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <string.h>

#include <cmocka.h>

#include "drivers/hb_drivers.h"
#include "fit/hb_fit.h"
#include "truth_model.h"

/*
 * The round trip. The simulator's "default" part (docs/simulator.md,
 * written out in tests/truth_model.h) is "measured": its L(I) from the
 * independent physics with a small deterministic reading noise. fit/
 * fits the core law; hb_design_solve takes the fitted mu_i and Js (with
 * their covariance) and gives the gap (turns held) or the turns (gap
 * held) for a target L at a current. That gap is then set in the
 * simulator (hb_sim_set_param "gap"); the part the simulator then holds
 * is read back parameter by parameter and its L at the target current is
 * computed by truth_model.h, never by fit/. It must equal the target
 * within the design's expanded uncertainty, and that uncertainty must be
 * small (an inflated U cannot make the check pass).
 */

#define N_POINTS 25
#define NOISE_REL 2e-4

/* Deterministic standard normal deviates: Box-Muller on a 64-bit LCG
 * (Knuth's MMIX constants, common practice). */
static uint64_t lcg = 88172645463325252ull;
static double uniform(void)
{
	lcg = lcg * 6364136223846793005ull + 1442695040888963407ull;
	return ((double)(lcg >> 11) + 0.5) / 9007199254740992.0;
}
static double normal(void)
{
	return sqrt(-2 * log(uniform())) * cos(2 * M_PI * uniform());
}

/* The simulator's part after hb_sim_set_param("gap", gap), read back. */
static truth_part simulated(double gap)
{
	hb_sim *sim = NULL;
	assert_int_equal(hb_sim_new("default", &sim), HB_OK);
	assert_int_equal(hb_sim_set_param(sim, "gap", gap), HB_OK);
	truth_part p = parts[0];
	double law;
	assert_int_equal(hb_sim_get_param(sim, "turns", &p.turns), HB_OK);
	assert_int_equal(hb_sim_get_param(sim, "ae", &p.ae), HB_OK);
	assert_int_equal(hb_sim_get_param(sim, "le", &p.le), HB_OK);
	assert_int_equal(hb_sim_get_param(sim, "mu_i", &p.mu_i), HB_OK);
	assert_int_equal(hb_sim_get_param(sim, "bsat", &p.js), HB_OK);
	assert_int_equal(hb_sim_get_param(sim, "gap", &p.gap), HB_OK);
	assert_int_equal(hb_sim_get_param(sim, "window", &p.window), HB_OK);
	assert_int_equal(hb_sim_get_param(sim, "law", &law), HB_OK);
	p.law = (law_t)(int)law;
	hb_sim_free(sim);
	return p;
}

typedef struct fitted {
	hb_fit_core_law_result law;
	hb_core_geometry geo;
} fitted;

/* The "measurement" of the default part and its core fit. */
static fitted fit_default_part(void)
{
	const truth_part *p = &parts[0];
	double top = p->top_over_drop30 * t_drop_current(p, 0.30);
	double I[N_POINTS], L[N_POINTS];
	lcg = 88172645463325252ull;
	for (int i = 0; i < N_POINTS; i++) {
		I[i] = top * i / (N_POINTS - 1);
		L[i] = t_inductance(p, I[i]) * (1 + NOISE_REL * normal());
	}
	hb_fit_options opt;
	hb_fit_options_init(&opt);
	opt.geo.turns = p->turns;
	opt.geo.Ae = p->ae;
	opt.geo.le = p->le;
	opt.geo.window_height = p->window;
	opt.noise_sigma = NOISE_REL * t_l0(p);
	static hb_fit_bias_result res;
	assert_int_equal(hb_fit_bias_analyse(I, L, NULL, N_POINTS, &opt, &res), HB_OK);
	assert_int_equal(res.core_status, HB_OK);
	fitted f = { res.core.law[res.core.best], opt.geo };
	return f;
}

static hb_design_in design_input(const fitted *f, double target, double amps)
{
	hb_design_in in;
	memset(&in, 0, sizeof in);
	in.law = f->law.law;
	in.mu_i = f->law.param[HB_CORE_MU_I];
	in.Js = f->law.param[HB_CORE_BSAT];
	in.u_mu_i = f->law.std_err[HB_CORE_MU_I];
	in.u_Js = f->law.std_err[HB_CORE_BSAT];
	in.r_mu_js = f->law.cov[HB_CORE_MU_I * 3 + HB_CORE_BSAT] / (in.u_mu_i * in.u_Js);
	in.dof = (double)f->law.dof;
	hb_core_shape_from_effective(f->geo.Ae, f->geo.le, f->geo.window_height, &in.core);
	in.place = HB_GAP_CENTRE;
	in.target_L = target;
	in.current = amps;
	return in;
}

/* Turns held at the part's 27: the gap for 100 uH at 2 A (the part has
 * about 112 uH at zero bias with its 0.5 mm gap, so a little more gap). */
static void test_gap_round_trip(void **state)
{
	(void)state;
	fitted f = fit_default_part();
	const double target = 100e-6, amps = 2.0;
	hb_design_in in = design_input(&f, target, amps);
	in.turns = parts[0].turns;
	hb_design_out o;
	assert_int_equal(hb_design_solve(&in, &o), HB_OK);
	assert_true(o.solved_gap);
	assert_true(o.U > 0);
	/* sane bound: the fit determines the gap to far better than 1 % */
	assert_true(o.U < 0.01 * o.gap_phys);
	truth_part p = simulated(o.gap_phys);
	double L = t_inductance(&p, amps);
	truth_part hi = simulated(o.gap_phys + o.U);
	double band = fabs(t_inductance(&hi, amps) - L);
	if (!(fabs(L - target) <= band))
		fail_msg("simulated L at %.3g A with the designed gap %.6g mm: %.8g uH, target %.8g uH, band %.3g uH "
			 "(U %.3g um)",
			 amps, o.gap_phys * 1e3, L * 1e6, target * 1e6, band * 1e6, o.U * 1e6);
	/* below the knee: the larger of the two gaps that give the target */
	truth_part bigger = simulated(1.05 * o.gap_phys);
	assert_true(t_inductance(&bigger, amps) < target);
}

/* Gap held at 0.6 mm: the turns for 100 uH at 2 A. */
static void test_turns_round_trip(void **state)
{
	(void)state;
	fitted f = fit_default_part();
	const double target = 100e-6, amps = 2.0, gap = 0.6e-3;
	hb_design_in in = design_input(&f, target, amps);
	in.turns = 0;
	in.gap = gap;
	hb_design_out o;
	assert_int_equal(hb_design_solve(&in, &o), HB_OK);
	assert_false(o.solved_gap);
	assert_true(o.U > 0 && o.U < 0.01 * o.turns);
	truth_part p = simulated(gap);
	p.turns = o.turns;
	double L = t_inductance(&p, amps);
	truth_part q = p;
	q.turns = o.turns + o.U;
	double band = fabs(t_inductance(&q, amps) - L);
	if (!(fabs(L - target) <= band))
		fail_msg("L with %.6g turns: %.8g uH, target %.8g uH, band %.3g uH", o.turns, L * 1e6, target * 1e6,
			 band * 1e6);
}

/* A target no gap can give: more than the ungapped core's L at 2 A */
static void test_unreachable(void **state)
{
	(void)state;
	fitted f = fit_default_part();
	hb_design_in in = design_input(&f, 10e-3, 2.0);
	in.turns = parts[0].turns;
	hb_design_out o;
	assert_int_equal(hb_design_solve(&in, &o), HB_ERR_DATA);
	assert_non_null(strstr(o.why, "no gap reaches the target"));
	/* a spacer gap needs the outer legs: a core known by Ae/le has none */
	in = design_input(&f, 100e-6, 2.0);
	in.turns = 0;
	in.gap = 0.3e-3;
	in.place = HB_GAP_SPACER;
	assert_int_equal(hb_design_solve(&in, &o), HB_ERR_ARG);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_gap_round_trip),
		cmocka_unit_test(test_turns_round_trip),
		cmocka_unit_test(test_unreachable),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
