/* src/io/json.c - the JSON blocks of a stored sweep that show and export share, and JSON numbers */
#include <math.h>

#include <jansson.h>

#include "io.h"

json_t *hb_json_num(double v)
{
	/* JSON has no NaN or infinity; jansson refuses them. */
	return isfinite(v) ? json_real(v) : json_null();
}

json_t *hb_json_sweep_head(const hb_db_sweep *s)
{
	json_t *o = json_object();
	json_object_set_new(o, "id", json_integer(s->id));
	json_object_set_new(o, "kind", json_string(hb_db_sweep_kind_name(s->kind)));
	json_object_set_new(o, "status", json_string(hb_db_sweep_status_name(s->status)));
	json_object_set_new(o, "status_reason", json_string(s->status_reason));
	json_object_set_new(o, "started", json_string(s->started_iso));
	json_object_set_new(o, "ended", s->ended_iso[0] ? json_string(s->ended_iso) : json_null());
	return o;
}

json_t *hb_json_sweep_instruments(const hb_db_sweep *s)
{
	json_t *inst = json_object();
	json_object_set_new(inst, "lcr_idn", json_string(s->lcr_idn));
	json_object_set_new(inst, "lcr_profile", json_string(s->lcr_profile));
	json_object_set_new(inst, "supply_idn", json_string(s->supply_idn));
	json_object_set_new(inst, "supply_profile", json_string(s->supply_profile));
	return inst;
}

json_t *hb_json_supply_record(const hb_db_sweep *s)
{
	json_t *o = json_object();
	json_object_set_new(o, "found_flowing_A", hb_json_num(s->supply_found_a));
	json_object_set_new(o, "at_switch_off_A", hb_json_num(s->supply_off_a));
	json_object_set_new(o, "decay_s", hb_json_num(s->supply_decay_s));
	return o;
}

json_t *hb_json_sweep_conditions(const hb_db_sweep *s)
{
	json_t *set = json_object();
	json_object_set_new(set, "test_frequency_Hz", hb_json_num(s->test_freq_hz));
	json_object_set_new(set, "test_level", hb_json_num(s->test_level));
	json_object_set_new(set, "test_level_unit", json_string(s->test_level_kind == HB_DB_LEVEL_CURRENT ? "A" : "V"));
	json_object_set_new(set, "bias_A", hb_json_num(s->bias_a));
	json_object_set_new(set, "circuit", json_string(s->circuit));
	json_object_set_new(set, "measured_pair", json_string(s->measured_pair));
	return set;
}
