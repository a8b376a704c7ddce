-- db/schema_pg.sql - the shared server's schema (PostgreSQL) as ordered migration steps; "-- step N" takes hb_schema.version N-1 to N
-- The same records as a station's store (db/schema.sql), keyed by their global identity (uid): ids are
-- the server's own, and records refer to each other by uid, so that stations whose local ids collide
-- never meet. Steps are applied in order, in one transaction under an advisory lock (two stations may
-- connect to a new server at once), and never edited once released.

-- step 1: the records of many stations, by identity
CREATE TABLE hb_meta (
	key TEXT PRIMARY KEY,
	value TEXT NOT NULL
);
-- the server's own identity: a station remembers what it pushed per server, not per URL
INSERT INTO hb_meta (key, value) VALUES ('server_uid', gen_random_uuid()::text);

CREATE TABLE parts (
	id BIGSERIAL PRIMARY KEY,
	uid TEXT NOT NULL UNIQUE,
	-- not unique: two stations may have entered the same part number; history joins them by number
	part_number TEXT NOT NULL,
	description TEXT NOT NULL DEFAULT '',
	maker TEXT NOT NULL DEFAULT '',
	nominal_h DOUBLE PRECISION, tolerance DOUBLE PRECISION, test_freq_hz DOUBLE PRECISION,
	test_level DOUBLE PRECISION, test_level_kind TEXT NOT NULL DEFAULT 'V',
	sat_current_a DOUBLE PRECISION, sat_drop DOUBLE PRECISION, rated_current_a DOUBLE PRECISION,
	dcr_max_ohm DOUBLE PRECISION, turns BIGINT, ae_m2 DOUBLE PRECISION, le_m DOUBLE PRECISION,
	window_m DOUBLE PRECISION, toroid_od_m DOUBLE PRECISION, toroid_id_m DOUBLE PRECISION,
	toroid_h_m DOUBLE PRECISION, mu_i DOUBLE PRECISION, bsat_t DOUBLE PRECISION,
	created TEXT NOT NULL, updated TEXT NOT NULL,
	decision_rule TEXT NOT NULL DEFAULT '', guard_r DOUBLE PRECISION,
	core_shape TEXT NOT NULL DEFAULT '', core_dims TEXT NOT NULL DEFAULT '', gap_at TEXT NOT NULL DEFAULT 'centre'
);
CREATE INDEX parts_number ON parts(part_number);

-- append-only: a revision is never changed, so two stations' edits of one part are two revisions
CREATE TABLE spec_revisions (
	id BIGSERIAL PRIMARY KEY,
	uid TEXT NOT NULL UNIQUE,
	part_uid TEXT NOT NULL REFERENCES parts(uid),
	revision BIGINT NOT NULL,
	created TEXT NOT NULL,
	description TEXT NOT NULL DEFAULT '', maker TEXT NOT NULL DEFAULT '',
	nominal_h DOUBLE PRECISION, tolerance DOUBLE PRECISION, test_freq_hz DOUBLE PRECISION,
	test_level DOUBLE PRECISION, test_level_kind TEXT NOT NULL DEFAULT 'V',
	sat_current_a DOUBLE PRECISION, sat_drop DOUBLE PRECISION, rated_current_a DOUBLE PRECISION,
	dcr_max_ohm DOUBLE PRECISION, turns BIGINT, ae_m2 DOUBLE PRECISION, le_m DOUBLE PRECISION,
	window_m DOUBLE PRECISION, toroid_od_m DOUBLE PRECISION, toroid_id_m DOUBLE PRECISION,
	toroid_h_m DOUBLE PRECISION, mu_i DOUBLE PRECISION, bsat_t DOUBLE PRECISION,
	decision_rule TEXT NOT NULL DEFAULT '', guard_r DOUBLE PRECISION
);
CREATE INDEX spec_revisions_part ON spec_revisions(part_uid, created);

CREATE TABLE lots (
	id BIGSERIAL PRIMARY KEY,
	uid TEXT NOT NULL UNIQUE,
	part_uid TEXT NOT NULL REFERENCES parts(uid),
	lot_code TEXT NOT NULL,
	lot_size BIGINT, aql DOUBLE PRECISION,
	inspection_level TEXT NOT NULL DEFAULT '', severity TEXT NOT NULL DEFAULT '',
	decision TEXT NOT NULL DEFAULT 'open',
	created TEXT NOT NULL,
	code_letter TEXT NOT NULL DEFAULT '', sample_size BIGINT NOT NULL DEFAULT 0,
	accept_number BIGINT NOT NULL DEFAULT 0, reject_number BIGINT NOT NULL DEFAULT 0,
	decided_at TEXT NOT NULL DEFAULT '',
	supplier TEXT NOT NULL DEFAULT '', production_irregular BIGINT NOT NULL DEFAULT 0,
	decided_unix DOUBLE PRECISION
);
CREATE INDEX lots_part ON lots(part_uid, supplier);

CREATE TABLE lot_decisions (
	id BIGSERIAL PRIMARY KEY,
	uid TEXT NOT NULL UNIQUE,
	lot_uid TEXT NOT NULL REFERENCES lots(uid),
	decision TEXT NOT NULL, decided_at TEXT NOT NULL,
	code_letter TEXT NOT NULL DEFAULT '', sample_size BIGINT NOT NULL DEFAULT 0,
	accept_number BIGINT NOT NULL DEFAULT 0, reject_number BIGINT NOT NULL DEFAULT 0,
	aql DOUBLE PRECISION, severity TEXT NOT NULL DEFAULT ''
);
CREATE INDEX lot_decisions_lot ON lot_decisions(lot_uid);
-- the lot row holds the latest decision, as in a station's store: a lot pushed while open learns its decision here
CREATE FUNCTION lot_decided() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
	UPDATE lots SET decision = NEW.decision, decided_at = NEW.decided_at, code_letter = NEW.code_letter,
		sample_size = NEW.sample_size, accept_number = NEW.accept_number, reject_number = NEW.reject_number
		WHERE uid = NEW.lot_uid AND decided_at <= NEW.decided_at;
	RETURN NULL;
END $$;
CREATE TRIGGER lot_decisions_latest AFTER INSERT ON lot_decisions FOR EACH ROW EXECUTE FUNCTION lot_decided();

-- what the responsible authority or the supplier did to a part's lot stream (ISO 2859-1 clause 9); an event
-- is named by its part, supplier, kind and instant
CREATE TABLE stream_events (
	id BIGSERIAL PRIMARY KEY,
	part_uid TEXT NOT NULL REFERENCES parts(uid),
	supplier TEXT NOT NULL DEFAULT '',
	kind TEXT NOT NULL,
	note TEXT NOT NULL DEFAULT '',
	at TEXT NOT NULL,
	at_unix DOUBLE PRECISION NOT NULL,
	UNIQUE (part_uid, supplier, kind, at_unix)
);

CREATE TABLE units (
	id BIGSERIAL PRIMARY KEY,
	uid TEXT NOT NULL UNIQUE,
	part_uid TEXT NOT NULL REFERENCES parts(uid),
	serial TEXT NOT NULL,
	lot_uid TEXT REFERENCES lots(uid),
	created TEXT NOT NULL
);
CREATE INDEX units_part ON units(part_uid, serial);
CREATE INDEX units_lot ON units(lot_uid);

-- the instrument register: one row per instrument (maker, model, serial) whichever station saw it
CREATE TABLE instruments (
	id BIGSERIAL PRIMARY KEY,
	kind TEXT NOT NULL, maker TEXT NOT NULL, model TEXT NOT NULL, serial TEXT NOT NULL,
	firmware TEXT NOT NULL DEFAULT '',
	first_seen TEXT NOT NULL, last_seen TEXT NOT NULL,
	accuracy TEXT NOT NULL DEFAULT '', accuracy_freq_above TEXT NOT NULL DEFAULT '',
	cal_date TEXT NOT NULL DEFAULT '', due_date TEXT NOT NULL DEFAULT '', certificate TEXT NOT NULL DEFAULT '',
	UNIQUE (maker, model, serial)
);

-- a compensation is a measurement at an instant: fixture, kind and time name it
CREATE TABLE fixture_compensations (
	id BIGSERIAL PRIMARY KEY,
	fixture TEXT NOT NULL, kind TEXT NOT NULL, method TEXT NOT NULL,
	instrument_id BIGINT REFERENCES instruments(id),
	at TEXT NOT NULL, at_unix DOUBLE PRECISION NOT NULL,
	residuals TEXT NOT NULL DEFAULT '[]', operator TEXT NOT NULL DEFAULT '', note TEXT NOT NULL DEFAULT '',
	UNIQUE (fixture, kind, at_unix)
);

CREATE TABLE sweeps (
	id BIGSERIAL PRIMARY KEY,
	uid TEXT NOT NULL UNIQUE,
	points_uid TEXT NOT NULL UNIQUE,
	unit_uid TEXT REFERENCES units(uid),
	kind TEXT NOT NULL,
	started_at TEXT NOT NULL, started_unix DOUBLE PRECISION NOT NULL,
	ended_at TEXT, ended_unix DOUBLE PRECISION,
	status TEXT NOT NULL, status_reason TEXT NOT NULL DEFAULT '',
	station TEXT NOT NULL DEFAULT '', operator TEXT NOT NULL DEFAULT '',
	host TEXT NOT NULL DEFAULT '', boot_id TEXT NOT NULL DEFAULT '', pid BIGINT,
	lcr_idn TEXT NOT NULL DEFAULT '', lcr_profile TEXT NOT NULL DEFAULT '',
	supply_idn TEXT NOT NULL DEFAULT '', supply_profile TEXT NOT NULL DEFAULT '',
	test_freq_hz DOUBLE PRECISION, test_level DOUBLE PRECISION, test_level_kind TEXT NOT NULL DEFAULT 'V',
	bias_a DOUBLE PRECISION, circuit TEXT NOT NULL DEFAULT '', measured_pair TEXT NOT NULL DEFAULT '',
	averaging BIGINT, aperture TEXT NOT NULL DEFAULT '', settle_mode TEXT NOT NULL DEFAULT '',
	settle_delay_s DOUBLE PRECISION, settle_tolerance DOUBLE PRECISION, settle_max_readings BIGINT,
	settle_max_s DOUBLE PRECISION, plan_from DOUBLE PRECISION, plan_to DOUBLE PRECISION, plan_steps BIGINT,
	plan_spacing TEXT NOT NULL DEFAULT '', limit_current_a DOUBLE PRECISION, limit_voltage_v DOUBLE PRECISION,
	ambient_c DOUBLE PRECISION, note TEXT NOT NULL DEFAULT '',
	reading_noise_rel DOUBLE PRECISION, dcr_meter_ohm DOUBLE PRECISION,
	supply_found_a DOUBLE PRECISION, supply_off_a DOUBLE PRECISION, supply_decay_s DOUBLE PRECISION,
	meter_accuracy_rel DOUBLE PRECISION, meter_accuracy TEXT NOT NULL DEFAULT '',
	supply_accuracy_rel DOUBLE PRECISION, supply_accuracy_offset_a DOUBLE PRECISION,
	supply_accuracy TEXT NOT NULL DEFAULT '',
	station_decision_rule TEXT NOT NULL DEFAULT '', station_guard_r DOUBLE PRECISION
);
CREATE INDEX sweeps_unit ON sweeps(unit_uid, kind, status, started_unix);
CREATE INDEX sweeps_started ON sweeps(started_unix);

-- points by the server's sweep id: ten million rows do not carry a 36-character identity each. No foreign
-- key: a per-row check would cost more than the insert, and the only insert joins the sweep it names.
CREATE TABLE points (
	sweep_id BIGINT NOT NULL,
	seq BIGINT NOT NULL,
	bias_set_a DOUBLE PRECISION, bias_meas_a DOUBLE PRECISION, supply_v DOUBLE PRECISION,
	freq_hz DOUBLE PRECISION, primary_value DOUBLE PRECISION, secondary_value DOUBLE PRECISION,
	reading_status BIGINT NOT NULL DEFAULT 0, t_s DOUBLE PRECISION, settle_readings BIGINT,
	settle_s DOUBLE PRECISION, direction TEXT NOT NULL DEFAULT 'up', bias_spread_a DOUBLE PRECISION,
	settled BIGINT NOT NULL DEFAULT 1,
	PRIMARY KEY (sweep_id, seq)
);

CREATE TABLE sweep_trace (
	sweep_uid TEXT PRIMARY KEY REFERENCES sweeps(uid),
	lcr_instrument_id BIGINT REFERENCES instruments(id),
	supply_instrument_id BIGINT REFERENCES instruments(id),
	cal_status TEXT NOT NULL DEFAULT '', overdue_allowed BIGINT NOT NULL DEFAULT 0,
	fixture TEXT NOT NULL DEFAULT '',
	open_comp_id BIGINT REFERENCES fixture_compensations(id),
	short_comp_id BIGINT REFERENCES fixture_compensations(id),
	fixture_status TEXT NOT NULL DEFAULT '', fixture_applied BIGINT NOT NULL DEFAULT 0,
	settings_start TEXT NOT NULL DEFAULT '{}', settings_end TEXT NOT NULL DEFAULT '{}',
	settings_changed TEXT NOT NULL DEFAULT ''
);

CREATE TABLE fits (
	id BIGSERIAL PRIMARY KEY,
	uid TEXT NOT NULL UNIQUE,
	sweep_uid TEXT NOT NULL REFERENCES sweeps(uid),
	model TEXT NOT NULL, law TEXT NOT NULL DEFAULT '', code_version TEXT NOT NULL DEFAULT '',
	created TEXT NOT NULL, rss DOUBLE PRECISION, dof BIGINT, aic DOUBLE PRECISION,
	covariance TEXT NOT NULL DEFAULT '', flags TEXT NOT NULL DEFAULT ''
);
CREATE INDEX fits_sweep ON fits(sweep_uid, model, id);

-- no foreign key, as for points: sent in the same transaction as their fit, which has one (to its sweep)
CREATE TABLE fit_values (
	fit_uid TEXT NOT NULL,
	ord BIGINT NOT NULL, name TEXT NOT NULL, value DOUBLE PRECISION, std_error DOUBLE PRECISION,
	unit TEXT NOT NULL DEFAULT '',
	PRIMARY KEY (fit_uid, name)
);

CREATE TABLE fit_uncertainty (
	fit_uid TEXT NOT NULL,
	name TEXT NOT NULL, value DOUBLE PRECISION, u_c DOUBLE PRECISION, dof DOUBLE PRECISION,
	k DOUBLE PRECISION, "U" DOUBLE PRECISION, budget TEXT NOT NULL DEFAULT '[]', note TEXT NOT NULL DEFAULT '',
	PRIMARY KEY (fit_uid, name)
);

-- append-only, as in a station's store; the one in force for a check is the newest
CREATE TABLE verdicts (
	id BIGSERIAL PRIMARY KEY,
	uid TEXT NOT NULL UNIQUE,
	sweep_uid TEXT NOT NULL REFERENCES sweeps(uid),
	check_name TEXT NOT NULL, measured DOUBLE PRECISION, limit_low DOUBLE PRECISION,
	limit_high DOUBLE PRECISION, margin DOUBLE PRECISION, outcome TEXT NOT NULL,
	note TEXT NOT NULL DEFAULT '', created TEXT NOT NULL, decision_rule TEXT NOT NULL DEFAULT 'simple',
	guard_r DOUBLE PRECISION, expanded_u DOUBLE PRECISION, coverage_k DOUBLE PRECISION,
	accept_low DOUBLE PRECISION, accept_high DOUBLE PRECISION, p_false_accept DOUBLE PRECISION,
	spec_rev_uid TEXT REFERENCES spec_revisions(uid),
	operator TEXT NOT NULL DEFAULT ''
);
CREATE INDEX verdicts_sweep ON verdicts(sweep_uid, check_name, id);

CREATE TABLE inspections (
	id BIGSERIAL PRIMARY KEY,
	uid TEXT NOT NULL UNIQUE,
	lot_uid TEXT NOT NULL REFERENCES lots(uid),
	sequence BIGINT NOT NULL, unit_uid TEXT REFERENCES units(uid), sweep_uid TEXT REFERENCES sweeps(uid),
	outcome TEXT NOT NULL, note TEXT NOT NULL DEFAULT '', at TEXT NOT NULL, at_unix DOUBLE PRECISION NOT NULL,
	conditional BIGINT NOT NULL DEFAULT 0
);
CREATE INDEX inspections_lot ON inspections(lot_uid, sequence);

-- a filed report's hashes (the file stays at the station that wrote it)
CREATE TABLE reports (
	id BIGSERIAL PRIMARY KEY,
	uid TEXT NOT NULL UNIQUE,
	kind TEXT NOT NULL, subject TEXT NOT NULL, path TEXT NOT NULL,
	file_sha256 TEXT NOT NULL DEFAULT '', data_sha256 TEXT NOT NULL,
	software_version TEXT NOT NULL, created TEXT NOT NULL
);
CREATE TABLE report_sweeps (
	report_uid TEXT NOT NULL REFERENCES reports(uid),
	sweep_uid TEXT NOT NULL REFERENCES sweeps(uid),
	PRIMARY KEY (report_uid, sweep_uid)
);

-- step 2: a part's drawing (drawn gap, curve-mask tolerance and source) and its data sheet's curve mask, by the
-- part's identity. A drawing is replaced whole by a strictly newer one (its `updated`): the newest drawing wins.
CREATE TABLE part_drawing (
	part_uid TEXT PRIMARY KEY REFERENCES parts(uid),
	gap_m DOUBLE PRECISION, gap_tol_m DOUBLE PRECISION, curve_tol DOUBLE PRECISION,
	curve_source TEXT NOT NULL DEFAULT '',
	updated TEXT NOT NULL
);
-- no foreign key, as for points: written only in the statement that wins the drawing it belongs to
CREATE TABLE part_curve_mask (
	part_uid TEXT NOT NULL,
	ord BIGINT NOT NULL,
	current_a DOUBLE PRECISION NOT NULL, inductance_h DOUBLE PRECISION NOT NULL, tol DOUBLE PRECISION,
	PRIMARY KEY (part_uid, ord)
);

-- step 3: indexes for the reads a server handle runs (checked by the plan watch in tests/test_pg_sync.c): the
-- lots that sampled a sweep, and the sweeps an instrument measured
CREATE INDEX inspections_sweep ON inspections(sweep_uid);
CREATE INDEX sweep_trace_lcr ON sweep_trace(lcr_instrument_id);
CREATE INDEX sweep_trace_supply ON sweep_trace(supply_instrument_id);
