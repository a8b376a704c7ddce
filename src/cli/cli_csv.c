/* src/cli/cli_csv.c - `sweeps --csv` and `compare --csv`: the listing and the side-by-side table through the io room's one CSV writer */
#include <math.h>
#include <stdio.h>

#include "../../db/hb_db.h"
#include "../io/io.h"
#include "cli.h"
#include "compare.h"

/* One row per sweep, the columns of the text listing and what it leaves out. */
int hb_cli_sweeps_csv(const struct hb_db_sweep *list, size_t n, FILE *out)
{
	static const char *const head[] = { "sweep_id", "started_utc", "ended_utc", "part", "unit", "lot", "kind",
					    "status", "status_reason", "points", "station", "operator", "test_freq_Hz",
					    "bias_A" };
	hb_csv_writer w;
	hb_csv_begin(&w, out);
	for (size_t k = 0; k < sizeof head / sizeof head[0]; k++)
		hb_csv_text(&w, head[k]);
	hb_csv_row_end(&w);
	for (size_t i = 0; i < n; i++) {
		const hb_db_sweep *s = &list[i];
		hb_csv_int(&w, s->id);
		hb_csv_text(&w, s->started_iso);
		hb_csv_text(&w, s->ended_iso);
		hb_csv_text(&w, s->part_number);
		hb_csv_text(&w, s->serial);
		hb_csv_text(&w, s->lot_code);
		hb_csv_text(&w, hb_db_sweep_kind_name(s->kind));
		hb_csv_text(&w, hb_db_sweep_status_name(s->status));
		hb_csv_text(&w, s->status_reason);
		hb_csv_int(&w, s->n_points);
		hb_csv_text(&w, s->station);
		hb_csv_text(&w, s->operator_name);
		hb_csv_num(&w, s->test_freq_hz);
		hb_csv_num(&w, s->kind == HB_DB_SWEEP_FREQUENCY ? s->bias_a : NAN);
		hb_csv_row_end(&w);
	}
	return hb_csv_end(&w);
}

/* One row per sweep (the text table's columns as rows), L at each common
 * current in a column named with that current in A. */
int hb_cli_compare_csv(const struct hb_compare_table *t, FILE *out)
{
	hb_csv_writer w;
	hb_csv_begin(&w, out);
	static const char *const head[] = { "sweep_id", "part", "unit", "lot", "station", "started_utc", "status", "L0_H" };
	for (size_t k = 0; k < sizeof head / sizeof head[0]; k++)
		hb_csv_text(&w, head[k]);
	for (int k = 0; k < HB_DB_HISTORY_DROPS; k++) {
		char name[32];
		snprintf(name, sizeof name, "I_drop%d_A", t->drop_percent[k]);
		hb_csv_text(&w, name);
	}
	hb_csv_text(&w, "mu_e");
	hb_csv_text(&w, "gap_m");
	hb_csv_text(&w, "verdict");
	for (size_t k = 0; k < t->n_currents; k++) {
		char num[40], name[64];
		snprintf(name, sizeof name, "L_H_at_%s_A", hb_csv_format_num(num, sizeof num, t->currents[k]));
		hb_csv_text(&w, name);
	}
	hb_csv_row_end(&w);
	for (size_t i = 0; i < t->n; i++) {
		const hb_compare_column *c = &t->cols[i];
		hb_csv_int(&w, c->sweep_id);
		hb_csv_text(&w, c->part_number);
		hb_csv_text(&w, c->serial);
		hb_csv_text(&w, c->lot_code);
		hb_csv_text(&w, c->station);
		hb_csv_text(&w, c->started_iso);
		hb_csv_text(&w, c->status);
		hb_csv_num(&w, c->l0_h);
		for (int k = 0; k < HB_DB_HISTORY_DROPS; k++)
			hb_csv_num(&w, c->i_drop_a[k]);
		hb_csv_num(&w, c->mu_e);
		hb_csv_num(&w, c->gap_m);
		hb_csv_text(&w, hb_db_outcome_name(c->verdict));
		for (size_t k = 0; k < t->n_currents; k++)
			hb_csv_num(&w, c->l_at[k]);
		hb_csv_row_end(&w);
	}
	return hb_csv_end(&w);
}
