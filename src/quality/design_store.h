/* src/quality/design_store.h - the design inverse's inputs read from the store: a part's latest core fit (mu_i, Js, law, their covariance) and its core */
#ifndef HB_DESIGN_STORE_H
#define HB_DESIGN_STORE_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "../../db/hb_db.h"
#include "../../fit/hb_fit.h"

/* The fitted core parameters of the newest fit of the part's newest
 * complete bias sweep, and the highest bias that sweep reached. */
typedef struct hb_design_fit {
	int64_t fit_id, sweep_id;
	hb_core_law law;
	double mu_i, u_mu_i, Js, u_Js, r, dof, i_max;
	bool r_known;                  /* r (mu_i with Js) from the stored covariance; else taken as 0 */
} hb_design_fit;

/* HB_OK; HB_ERR_NOTFOUND (no complete bias sweep), HB_ERR_DATA (no fit, no
 * core-law fit, mu_i or Js undetermined), HB_ERR_DB, each with one line in err. */
int hb_design_load_fit(hb_db *db, const char *part_number, hb_design_fit *out, char *err, size_t errlen);

/* The part's core: its IEC 60205 set when it has one, else Ae, le and
 * window; *place from the stored gap placement; shape_text says which.
 * HB_ERR_ARG when the part has no core geometry, HB_ERR_DATA when its set
 * does not evaluate, HB_ERR_DB. */
int hb_design_load_core(hb_db *db, const hb_db_part *p, hb_core_shape_result *r, hb_gap_place *place,
			char *shape_text, size_t cap, char *err, size_t errlen);

#endif
