# db/schema.sql - the store's schema as ordered migration steps; "-- step N" takes user_version N-1 to N
-- Steps are applied in order, each in its own transaction, and never edited
-- once released: a change is a new step at the end.

-- step 1: core tables (parts, lots, units, sweeps, points)
CREATE TABLE parts (
	id INTEGER PRIMARY KEY,
	part_number TEXT NOT NULL UNIQUE,
	description TEXT NOT NULL DEFAULT '',
	maker TEXT NOT NULL DEFAULT '',
	nominal_h REAL,
	tolerance REAL,
	test_freq_hz REAL,
	test_level REAL,
	test_level_kind TEXT NOT NULL DEFAULT 'V' CHECK (test_level_kind IN ('V', 'A')),
	sat_current_a REAL,
	sat_drop REAL,
	rated_current_a REAL,
	dcr_max_ohm REAL,
	turns INTEGER,
	ae_m2 REAL,
	le_m REAL,
	window_m REAL,
	toroid_od_m REAL,
	toroid_id_m REAL,
	toroid_h_m REAL,
	mu_i REAL,
	bsat_t REAL,
	created TEXT NOT NULL,
	updated TEXT NOT NULL
);

CREATE TABLE lots (
	id INTEGER PRIMARY KEY,
	part_id INTEGER NOT NULL REFERENCES parts(id),
	lot_code TEXT NOT NULL,
	lot_size INTEGER,
	aql REAL,
	inspection_level TEXT NOT NULL DEFAULT '',
	severity TEXT NOT NULL DEFAULT '',
	decision TEXT NOT NULL DEFAULT 'open' CHECK (decision IN ('open', 'accept', 'reject')),
	created TEXT NOT NULL,
	UNIQUE (part_id, lot_code)
);

CREATE TABLE units (
	id INTEGER PRIMARY KEY,
	part_id INTEGER NOT NULL REFERENCES parts(id),
	serial TEXT NOT NULL,
	lot_id INTEGER REFERENCES lots(id),
	created TEXT NOT NULL,
	UNIQUE (part_id, serial)
);
CREATE INDEX units_lot ON units(lot_id);
CREATE INDEX units_serial ON units(serial);

CREATE TABLE sweeps (
	id INTEGER PRIMARY KEY,
	kind TEXT NOT NULL CHECK (kind IN ('bias', 'frequency')),
	unit_id INTEGER REFERENCES units(id),
	started_at TEXT NOT NULL,
	started_unix REAL NOT NULL,
	ended_at TEXT,
	ended_unix REAL,
	status TEXT NOT NULL
		CHECK (status IN ('running', 'complete', 'aborted', 'failed', 'interrupted')),
	status_reason TEXT NOT NULL DEFAULT '',
	station TEXT NOT NULL DEFAULT '',
	operator TEXT NOT NULL DEFAULT '',
	-- owner of a running sweep: only its own host may declare it dead
	host TEXT NOT NULL DEFAULT '',
	boot_id TEXT NOT NULL DEFAULT '',
	pid INTEGER,
	lcr_idn TEXT NOT NULL DEFAULT '',
	lcr_profile TEXT NOT NULL DEFAULT '',
	supply_idn TEXT NOT NULL DEFAULT '',
	supply_profile TEXT NOT NULL DEFAULT '',
	test_freq_hz REAL,
	test_level REAL,
	test_level_kind TEXT NOT NULL DEFAULT 'V' CHECK (test_level_kind IN ('V', 'A')),
	bias_a REAL,
	circuit TEXT NOT NULL DEFAULT '',
	measured_pair TEXT NOT NULL DEFAULT '',
	averaging INTEGER,
	aperture TEXT NOT NULL DEFAULT '',
	settle_mode TEXT NOT NULL DEFAULT '',
	settle_delay_s REAL,
	settle_tolerance REAL,
	settle_max_readings INTEGER,
	settle_max_s REAL,
	plan_from REAL,
	plan_to REAL,
	plan_steps INTEGER,
	plan_spacing TEXT NOT NULL DEFAULT '',
	limit_current_a REAL,
	limit_voltage_v REAL,
	ambient_c REAL,
	note TEXT NOT NULL DEFAULT ''
);
-- per unit: history picks the latest complete bias sweep of each unit
CREATE INDEX sweeps_unit ON sweeps(unit_id, kind, status, started_unix);
CREATE INDEX sweeps_started ON sweeps(started_unix);
-- by status: listings by status, and the scan for running sweeps at every open
CREATE INDEX sweeps_status ON sweeps(status, started_unix);

CREATE TABLE points (
	sweep_id INTEGER NOT NULL REFERENCES sweeps(id) ON DELETE CASCADE,
	seq INTEGER NOT NULL,
	bias_set_a REAL,
	bias_meas_a REAL,
	supply_v REAL,
	freq_hz REAL,
	primary_value REAL,
	secondary_value REAL,
	reading_status INTEGER NOT NULL DEFAULT 0,
	t_s REAL,
	settle_readings INTEGER,
	settle_s REAL,
	direction TEXT NOT NULL DEFAULT 'up' CHECK (direction IN ('up', 'down')),
	PRIMARY KEY (sweep_id, seq)
) WITHOUT ROWID;

-- step 2: fits with named values, verdicts
CREATE TABLE fits (
	id INTEGER PRIMARY KEY,
	sweep_id INTEGER NOT NULL REFERENCES sweeps(id) ON DELETE CASCADE,
	model TEXT NOT NULL,
	law TEXT NOT NULL DEFAULT '',
	code_version TEXT NOT NULL DEFAULT '',
	created TEXT NOT NULL,
	rss REAL,
	dof INTEGER,
	aic REAL,
	covariance TEXT NOT NULL DEFAULT '',
	flags TEXT NOT NULL DEFAULT ''
);
CREATE INDEX fits_sweep ON fits(sweep_id, model);

CREATE TABLE fit_values (
	fit_id INTEGER NOT NULL REFERENCES fits(id) ON DELETE CASCADE,
	ord INTEGER NOT NULL,
	name TEXT NOT NULL,
	value REAL,
	std_error REAL,
	unit TEXT NOT NULL DEFAULT '',
	PRIMARY KEY (fit_id, name)
) WITHOUT ROWID;

CREATE TABLE verdicts (
	id INTEGER PRIMARY KEY,
	sweep_id INTEGER NOT NULL REFERENCES sweeps(id) ON DELETE CASCADE,
	check_name TEXT NOT NULL,
	measured REAL,
	limit_low REAL,
	limit_high REAL,
	margin REAL,
	outcome TEXT NOT NULL CHECK (outcome IN ('not-tested', 'pass', 'fail')),
	note TEXT NOT NULL DEFAULT '',
	created TEXT NOT NULL,
	UNIQUE (sweep_id, check_name)
);

-- step 3: lot inspection (ISO 2859-1 sample plan on the lot, one record per sample)
ALTER TABLE lots ADD COLUMN code_letter TEXT NOT NULL DEFAULT '';
ALTER TABLE lots ADD COLUMN sample_size INTEGER NOT NULL DEFAULT 0;
ALTER TABLE lots ADD COLUMN accept_number INTEGER NOT NULL DEFAULT 0;
ALTER TABLE lots ADD COLUMN reject_number INTEGER NOT NULL DEFAULT 0;
ALTER TABLE lots ADD COLUMN decided_at TEXT NOT NULL DEFAULT '';

CREATE TABLE inspections (
	id INTEGER PRIMARY KEY,
	lot_id INTEGER NOT NULL REFERENCES lots(id) ON DELETE CASCADE,
	sequence INTEGER NOT NULL CHECK (sequence >= 1),
	unit_id INTEGER REFERENCES units(id),
	sweep_id INTEGER REFERENCES sweeps(id),
	outcome TEXT NOT NULL CHECK (outcome IN ('pass', 'fail', 'skipped')),
	note TEXT NOT NULL DEFAULT '',
	at TEXT NOT NULL,
	at_unix REAL NOT NULL,
	UNIQUE (lot_id, sequence)
);

-- step 4: what the instruments told about the part besides the points: the meter's reading noise (so a refit weighs the points as the sweep did) and its DC-resistance reading
ALTER TABLE sweeps ADD COLUMN reading_noise_rel REAL;
-- the meter's own DC-resistance reading of the winding, where its profile has that operation
ALTER TABLE sweeps ADD COLUMN dcr_meter_ohm REAL;

-- step 5: what the readings saw and what the supply did: the spread of the current read-backs that bracket each point's readings, whether the point settled, and the supply's state at start and at switch-off
ALTER TABLE points ADD COLUMN bias_spread_a REAL;
ALTER TABLE points ADD COLUMN settled INTEGER NOT NULL DEFAULT 1;
ALTER TABLE sweeps ADD COLUMN supply_found_a REAL;
ALTER TABLE sweeps ADD COLUMN supply_off_a REAL;
ALTER TABLE sweeps ADD COLUMN supply_decay_s REAL;

-- step 6: uncertainty and decision rules: the accuracy in force with each sweep, the GUM budget of each fitted quantity, the decision rule of a part and what it produced in each verdict, conditional outcomes
-- the meter's accuracy (fraction of reading, at the sweep's test frequency) and the supply's read-back current accuracy, as the profile or station file stated them
ALTER TABLE sweeps ADD COLUMN meter_accuracy_rel REAL;
ALTER TABLE sweeps ADD COLUMN meter_accuracy TEXT NOT NULL DEFAULT '';
ALTER TABLE sweeps ADD COLUMN supply_accuracy_rel REAL;
ALTER TABLE sweeps ADD COLUMN supply_accuracy_offset_a REAL;
ALTER TABLE sweeps ADD COLUMN supply_accuracy TEXT NOT NULL DEFAULT '';
-- the station's default decision rule when the sweep ran ('' = none stated: simple acceptance)
ALTER TABLE sweeps ADD COLUMN station_decision_rule TEXT NOT NULL DEFAULT '';
ALTER TABLE sweeps ADD COLUMN station_guard_r REAL;
-- a part's decision rule: '' = the station's default; guard_r is r in w = r U
ALTER TABLE parts ADD COLUMN decision_rule TEXT NOT NULL DEFAULT '' CHECK (decision_rule IN ('', 'simple', 'guarded', 'non-binary'));
ALTER TABLE parts ADD COLUMN guard_r REAL;

CREATE TABLE fit_uncertainty (
	fit_id INTEGER NOT NULL REFERENCES fits(id) ON DELETE CASCADE,
	name TEXT NOT NULL,
	value REAL,
	u_c REAL,
	dof REAL,
	k REAL,
	U REAL,
	budget TEXT NOT NULL DEFAULT '[]',
	note TEXT NOT NULL DEFAULT '',
	PRIMARY KEY (fit_id, name)
) WITHOUT ROWID;

-- verdicts with the conditional outcomes of the non-binary rule: SQLite cannot widen a CHECK in place, so the table is rebuilt
CREATE TABLE verdicts_new (
	id INTEGER PRIMARY KEY,
	sweep_id INTEGER NOT NULL REFERENCES sweeps(id) ON DELETE CASCADE,
	check_name TEXT NOT NULL,
	measured REAL,
	limit_low REAL,
	limit_high REAL,
	margin REAL,
	outcome TEXT NOT NULL CHECK (outcome IN ('not-tested', 'pass', 'fail', 'conditional-pass', 'conditional-fail')),
	note TEXT NOT NULL DEFAULT '',
	created TEXT NOT NULL,
	decision_rule TEXT NOT NULL DEFAULT 'simple',
	guard_r REAL,
	expanded_u REAL,
	coverage_k REAL,
	accept_low REAL,
	accept_high REAL,
	p_false_accept REAL,
	UNIQUE (sweep_id, check_name)
);
INSERT INTO verdicts_new (id, sweep_id, check_name, measured, limit_low, limit_high, margin, outcome, note, created)
	SELECT id, sweep_id, check_name, measured, limit_low, limit_high, margin, outcome, note, created FROM verdicts;
DROP TABLE verdicts;
ALTER TABLE verdicts_new RENAME TO verdicts;
-- a lot's sample record: the unit's outcome was conditional (counted by the plan's stated policy)
ALTER TABLE inspections ADD COLUMN conditional INTEGER NOT NULL DEFAULT 0;

-- step 7: an index for the queries of a large store: a sweep's newest fit, found without sorting its fits (history, fit, show)
CREATE INDEX fits_sweep_newest ON fits(sweep_id, id);
-- step 8: the core set of a part (IEC 60205 shape and its dimensions, "" = none) and where its gap is
ALTER TABLE parts ADD COLUMN core_shape TEXT NOT NULL DEFAULT '';
ALTER TABLE parts ADD COLUMN core_dims TEXT NOT NULL DEFAULT '';
ALTER TABLE parts ADD COLUMN gap_at TEXT NOT NULL DEFAULT 'centre' CHECK (gap_at IN ('centre', 'spacer'));
-- step 9: traceability: a global identity (UUID version 7, docs/store.md) on every record, spec revisions, append-only verdicts and lot decisions, filed reports with their hashes
-- hb_uid_at(ms) is the store's own SQL function (db/db_trace.c): identities for records made before this step, stamped with their own time
ALTER TABLE parts ADD COLUMN uid TEXT;
ALTER TABLE lots ADD COLUMN uid TEXT;
ALTER TABLE units ADD COLUMN uid TEXT;
ALTER TABLE sweeps ADD COLUMN uid TEXT;
-- the identity of a sweep's set of points (what a report's data hash rests on)
ALTER TABLE sweeps ADD COLUMN points_uid TEXT;
ALTER TABLE fits ADD COLUMN uid TEXT;
ALTER TABLE inspections ADD COLUMN uid TEXT;
UPDATE parts SET uid = hb_uid_at(CAST((julianday(created) - 2440587.5) * 86400000 AS INTEGER));
UPDATE lots SET uid = hb_uid_at(CAST((julianday(created) - 2440587.5) * 86400000 AS INTEGER));
UPDATE units SET uid = hb_uid_at(CAST((julianday(created) - 2440587.5) * 86400000 AS INTEGER));
UPDATE sweeps SET uid = hb_uid_at(CAST(started_unix * 1000 AS INTEGER)),
	points_uid = hb_uid_at(CAST(started_unix * 1000 AS INTEGER));
UPDATE fits SET uid = hb_uid_at(CAST((julianday(created) - 2440587.5) * 86400000 AS INTEGER));
UPDATE inspections SET uid = hb_uid_at(CAST(at_unix * 1000 AS INTEGER));
CREATE UNIQUE INDEX parts_uid ON parts(uid);
CREATE UNIQUE INDEX lots_uid ON lots(uid);
CREATE UNIQUE INDEX units_uid ON units(uid);
CREATE UNIQUE INDEX sweeps_uid ON sweeps(uid);
CREATE UNIQUE INDEX sweeps_points_uid ON sweeps(points_uid);
CREATE UNIQUE INDEX fits_uid ON fits(uid);
CREATE UNIQUE INDEX inspections_uid ON inspections(uid);

-- every version of a part's specification; a change of any spec field makes the next revision, the old ones stay
CREATE TABLE spec_revisions (
	id INTEGER PRIMARY KEY,
	uid TEXT UNIQUE,
	part_id INTEGER NOT NULL REFERENCES parts(id),
	revision INTEGER NOT NULL CHECK (revision >= 1),
	created TEXT NOT NULL,
	description TEXT NOT NULL DEFAULT '',
	maker TEXT NOT NULL DEFAULT '',
	nominal_h REAL, tolerance REAL, test_freq_hz REAL, test_level REAL,
	test_level_kind TEXT NOT NULL DEFAULT 'V',
	sat_current_a REAL, sat_drop REAL, rated_current_a REAL, dcr_max_ohm REAL, turns INTEGER,
	ae_m2 REAL, le_m REAL, window_m REAL, toroid_od_m REAL, toroid_id_m REAL, toroid_h_m REAL,
	mu_i REAL, bsat_t REAL,
	decision_rule TEXT NOT NULL DEFAULT '',
	guard_r REAL,
	UNIQUE (part_id, revision)
);
INSERT INTO spec_revisions (uid, part_id, revision, created, description, maker, nominal_h, tolerance, test_freq_hz,
	test_level, test_level_kind, sat_current_a, sat_drop, rated_current_a, dcr_max_ohm, turns, ae_m2, le_m, window_m,
	toroid_od_m, toroid_id_m, toroid_h_m, mu_i, bsat_t, decision_rule, guard_r)
	SELECT hb_uid_at(CAST((julianday(updated) - 2440587.5) * 86400000 AS INTEGER)), id, 1, updated, description, maker,
	nominal_h, tolerance, test_freq_hz, test_level, test_level_kind, sat_current_a, sat_drop, rated_current_a,
	dcr_max_ohm, turns, ae_m2, le_m, window_m, toroid_od_m, toroid_id_m, toroid_h_m, mu_i, bsat_t, decision_rule, guard_r
	FROM parts;
CREATE TRIGGER parts_first_revision AFTER INSERT ON parts BEGIN
	INSERT INTO spec_revisions (part_id, revision, created, description, maker, nominal_h, tolerance, test_freq_hz,
		test_level, test_level_kind, sat_current_a, sat_drop, rated_current_a, dcr_max_ohm, turns, ae_m2, le_m,
		window_m, toroid_od_m, toroid_id_m, toroid_h_m, mu_i, bsat_t, decision_rule, guard_r)
	VALUES (NEW.id, 1, NEW.updated, NEW.description, NEW.maker, NEW.nominal_h, NEW.tolerance, NEW.test_freq_hz,
		NEW.test_level, NEW.test_level_kind, NEW.sat_current_a, NEW.sat_drop, NEW.rated_current_a, NEW.dcr_max_ohm,
		NEW.turns, NEW.ae_m2, NEW.le_m, NEW.window_m, NEW.toroid_od_m, NEW.toroid_id_m, NEW.toroid_h_m, NEW.mu_i,
		NEW.bsat_t, NEW.decision_rule, NEW.guard_r);
END;
CREATE TRIGGER parts_next_revision AFTER UPDATE ON parts
	WHEN NEW.description IS NOT OLD.description OR NEW.maker IS NOT OLD.maker OR NEW.nominal_h IS NOT OLD.nominal_h
	OR NEW.tolerance IS NOT OLD.tolerance OR NEW.test_freq_hz IS NOT OLD.test_freq_hz
	OR NEW.test_level IS NOT OLD.test_level OR NEW.test_level_kind IS NOT OLD.test_level_kind
	OR NEW.sat_current_a IS NOT OLD.sat_current_a OR NEW.sat_drop IS NOT OLD.sat_drop
	OR NEW.rated_current_a IS NOT OLD.rated_current_a OR NEW.dcr_max_ohm IS NOT OLD.dcr_max_ohm
	OR NEW.turns IS NOT OLD.turns OR NEW.ae_m2 IS NOT OLD.ae_m2 OR NEW.le_m IS NOT OLD.le_m
	OR NEW.window_m IS NOT OLD.window_m OR NEW.toroid_od_m IS NOT OLD.toroid_od_m
	OR NEW.toroid_id_m IS NOT OLD.toroid_id_m OR NEW.toroid_h_m IS NOT OLD.toroid_h_m OR NEW.mu_i IS NOT OLD.mu_i
	OR NEW.bsat_t IS NOT OLD.bsat_t OR NEW.decision_rule IS NOT OLD.decision_rule OR NEW.guard_r IS NOT OLD.guard_r
BEGIN
	INSERT INTO spec_revisions (part_id, revision, created, description, maker, nominal_h, tolerance, test_freq_hz,
		test_level, test_level_kind, sat_current_a, sat_drop, rated_current_a, dcr_max_ohm, turns, ae_m2, le_m,
		window_m, toroid_od_m, toroid_id_m, toroid_h_m, mu_i, bsat_t, decision_rule, guard_r)
	VALUES (NEW.id, (SELECT coalesce(max(revision), 0) + 1 FROM spec_revisions WHERE part_id = NEW.id), NEW.updated,
		NEW.description, NEW.maker, NEW.nominal_h, NEW.tolerance, NEW.test_freq_hz, NEW.test_level,
		NEW.test_level_kind, NEW.sat_current_a, NEW.sat_drop, NEW.rated_current_a, NEW.dcr_max_ohm, NEW.turns,
		NEW.ae_m2, NEW.le_m, NEW.window_m, NEW.toroid_od_m, NEW.toroid_id_m, NEW.toroid_h_m, NEW.mu_i, NEW.bsat_t,
		NEW.decision_rule, NEW.guard_r);
END;

-- verdicts are appended, never replaced: a later judgement of the same check supersedes the earlier one, which stays.
-- Each keeps its time, operator, decision rule and the spec revision it was judged against. The table is rebuilt
-- because SQLite cannot drop the old UNIQUE (sweep_id, check_name) in place.
CREATE TABLE verdicts_new (
	id INTEGER PRIMARY KEY,
	sweep_id INTEGER NOT NULL REFERENCES sweeps(id) ON DELETE CASCADE,
	check_name TEXT NOT NULL,
	measured REAL,
	limit_low REAL,
	limit_high REAL,
	margin REAL,
	outcome TEXT NOT NULL CHECK (outcome IN ('not-tested', 'pass', 'fail', 'conditional-pass', 'conditional-fail')),
	note TEXT NOT NULL DEFAULT '',
	created TEXT NOT NULL,
	decision_rule TEXT NOT NULL DEFAULT 'simple',
	guard_r REAL,
	expanded_u REAL,
	coverage_k REAL,
	accept_low REAL,
	accept_high REAL,
	p_false_accept REAL,
	uid TEXT UNIQUE,
	spec_rev_id INTEGER REFERENCES spec_revisions(id),
	operator TEXT NOT NULL DEFAULT '',
	superseded_by INTEGER
);
INSERT INTO verdicts_new (id, sweep_id, check_name, measured, limit_low, limit_high, margin, outcome, note, created,
	decision_rule, guard_r, expanded_u, coverage_k, accept_low, accept_high, p_false_accept, uid, spec_rev_id)
	SELECT v.id, v.sweep_id, v.check_name, v.measured, v.limit_low, v.limit_high, v.margin, v.outcome, v.note, v.created,
	v.decision_rule, v.guard_r, v.expanded_u, v.coverage_k, v.accept_low, v.accept_high, v.p_false_accept,
	hb_uid_at(CAST((julianday(v.created) - 2440587.5) * 86400000 AS INTEGER)),
	(SELECT r.id FROM sweeps s JOIN units u ON u.id = s.unit_id JOIN spec_revisions r ON r.part_id = u.part_id
	 WHERE s.id = v.sweep_id AND r.revision = 1)
	FROM verdicts v;
DROP TABLE verdicts;
ALTER TABLE verdicts_new RENAME TO verdicts;
CREATE INDEX verdicts_sweep ON verdicts(sweep_id, check_name, superseded_by);
CREATE TRIGGER verdicts_append AFTER INSERT ON verdicts BEGIN
	UPDATE verdicts SET superseded_by = NEW.id
		WHERE sweep_id = NEW.sweep_id AND check_name = NEW.check_name AND id <> NEW.id AND superseded_by IS NULL;
	UPDATE verdicts SET spec_rev_id = (SELECT r.id FROM sweeps s JOIN units u ON u.id = s.unit_id
		JOIN spec_revisions r ON r.part_id = u.part_id WHERE s.id = NEW.sweep_id ORDER BY r.revision DESC LIMIT 1)
		WHERE id = NEW.id AND NEW.spec_rev_id IS NULL;
END;
CREATE TRIGGER verdicts_keep BEFORE UPDATE OF sweep_id, check_name, measured, limit_low, limit_high, margin, outcome,
	note, created, decision_rule, guard_r, expanded_u, coverage_k, accept_low, accept_high, p_false_accept,
	operator ON verdicts
BEGIN
	SELECT RAISE(ABORT, 'verdicts are append-only: judge again to supersede one');
END;
CREATE TRIGGER verdicts_keep_revision BEFORE UPDATE OF spec_rev_id ON verdicts WHEN OLD.spec_rev_id IS NOT NULL BEGIN
	SELECT RAISE(ABORT, 'a verdict keeps the spec revision it was judged against');
END;
CREATE TRIGGER fits_keep BEFORE UPDATE OF sweep_id, model, law, code_version, created, rss, dof, aic, covariance,
	flags ON fits
BEGIN
	SELECT RAISE(ABORT, 'fits are append-only: fit again to add one');
END;

-- every lot decision made, in order; the lot row holds the latest
CREATE TABLE lot_decisions (
	id INTEGER PRIMARY KEY,
	uid TEXT UNIQUE,
	lot_id INTEGER NOT NULL REFERENCES lots(id) ON DELETE CASCADE,
	decision TEXT NOT NULL CHECK (decision IN ('accept', 'reject')),
	decided_at TEXT NOT NULL,
	code_letter TEXT NOT NULL DEFAULT '',
	sample_size INTEGER NOT NULL DEFAULT 0,
	accept_number INTEGER NOT NULL DEFAULT 0,
	reject_number INTEGER NOT NULL DEFAULT 0,
	aql REAL,
	severity TEXT NOT NULL DEFAULT ''
);
INSERT INTO lot_decisions (uid, lot_id, decision, decided_at, code_letter, sample_size, accept_number, reject_number,
	aql, severity)
	SELECT hb_uid_at(CAST((julianday(coalesce(nullif(decided_at, ''), created)) - 2440587.5) * 86400000 AS INTEGER)),
	id, decision, coalesce(nullif(decided_at, ''), created), code_letter, sample_size, accept_number, reject_number, aql,
	severity FROM lots WHERE decision <> 'open';
CREATE TRIGGER lots_decided AFTER UPDATE OF decision ON lots
	WHEN NEW.decision <> 'open' AND NEW.decision IS NOT OLD.decision
BEGIN
	INSERT INTO lot_decisions (lot_id, decision, decided_at, code_letter, sample_size, accept_number, reject_number,
		aql, severity)
	VALUES (NEW.id, NEW.decision, NEW.decided_at, NEW.code_letter, NEW.sample_size, NEW.accept_number,
		NEW.reject_number, NEW.aql, NEW.severity);
END;
CREATE TRIGGER lot_decisions_keep BEFORE UPDATE OF lot_id, decision, decided_at ON lot_decisions BEGIN
	SELECT RAISE(ABORT, 'lot decisions are append-only');
END;

-- a filed report: its number, what it shows, where it was written, the SHA-256 of the file as written and of the
-- canonical export of the points it rests on (docs/store.md), and the sweeps those points belong to
CREATE TABLE reports (
	id INTEGER PRIMARY KEY,
	uid TEXT NOT NULL UNIQUE,
	kind TEXT NOT NULL CHECK (kind IN ('sweep', 'lot', 'part')),
	subject TEXT NOT NULL,
	path TEXT NOT NULL,
	file_sha256 TEXT NOT NULL DEFAULT '',
	data_sha256 TEXT NOT NULL,
	software_version TEXT NOT NULL,
	created TEXT NOT NULL
);
CREATE TABLE report_sweeps (
	report_id INTEGER NOT NULL REFERENCES reports(id) ON DELETE CASCADE,
	sweep_id INTEGER NOT NULL REFERENCES sweeps(id),
	PRIMARY KEY (report_id, sweep_id)
) WITHOUT ROWID;
-- step 10: the lot stream of a part from one supplier, for the switching rules of ISO 2859-1 clause 9 (normal, tightened, reduced, discontinued)
-- who delivered the lot ('' = not named); lots of one part and supplier form one stream
ALTER TABLE lots ADD COLUMN supplier TEXT NOT NULL DEFAULT '';
-- production of this lot was irregular or delayed (ISO 2859-1:1999 9.3.4 b), as the inspector stated it
ALTER TABLE lots ADD COLUMN production_irregular INTEGER NOT NULL DEFAULT 0;
-- when the decision was recorded, to the microsecond: the order of the stream (decided_at has whole seconds)
ALTER TABLE lots ADD COLUMN decided_unix REAL;
CREATE INDEX lots_stream ON lots(part_id, supplier);
-- what the responsible authority or the supplier did to the stream: approve or withdraw reduced inspection, resume after discontinuation
CREATE TABLE stream_events (
	id INTEGER PRIMARY KEY,
	part_id INTEGER NOT NULL REFERENCES parts(id),
	supplier TEXT NOT NULL DEFAULT '',
	kind TEXT NOT NULL CHECK (kind IN ('approve-reduced', 'withdraw-reduced', 'resume')),
	note TEXT NOT NULL DEFAULT '',
	at TEXT NOT NULL,
	at_unix REAL NOT NULL
);
CREATE INDEX stream_events_stream ON stream_events(part_id, supplier);
-- step 11: a log of deletions: what was deleted, when, by whom, why, and whether records that depended on it were overridden
CREATE TABLE deletions (
	id INTEGER PRIMARY KEY,
	at_unix REAL NOT NULL,
	at TEXT NOT NULL,
	operator TEXT NOT NULL DEFAULT '',
	host TEXT NOT NULL DEFAULT '',
	what TEXT NOT NULL,
	reason TEXT NOT NULL DEFAULT '',
	forced INTEGER NOT NULL DEFAULT 0
);
-- step 12: the drawing and the data sheet beside a part: its drawn gap with the drawing's tolerance, and its data sheet's L-against-current curve as a tolerance mask (points in current order)
CREATE TABLE part_drawing (
	part_id INTEGER PRIMARY KEY REFERENCES parts(id) ON DELETE CASCADE,
	gap_m REAL,
	gap_tol_m REAL,
	curve_tol REAL,
	curve_source TEXT NOT NULL DEFAULT ''
);
CREATE TABLE part_curve_mask (
	part_id INTEGER NOT NULL REFERENCES parts(id) ON DELETE CASCADE,
	ord INTEGER NOT NULL,
	current_a REAL NOT NULL,
	inductance_h REAL NOT NULL,
	tol REAL,
	PRIMARY KEY (part_id, ord)
) WITHOUT ROWID;
-- step 13: traceability: the instrument register (from *IDN?, with calibration status and an accuracy override), fixture compensations, and per sweep the instruments, compensation and settings read back
CREATE TABLE instruments (
	id INTEGER PRIMARY KEY,
	kind TEXT NOT NULL CHECK (kind IN ('lcr', 'supply')),
	maker TEXT NOT NULL,
	model TEXT NOT NULL,
	serial TEXT NOT NULL,
	firmware TEXT NOT NULL DEFAULT '',
	first_seen TEXT NOT NULL,
	last_seen TEXT NOT NULL,
	-- overrides the profile's and the station file's accuracy: '' = none (meter: "0.1%", supply: "0.05% + 1mA")
	accuracy TEXT NOT NULL DEFAULT '',
	accuracy_freq_above TEXT NOT NULL DEFAULT '',
	cal_date TEXT NOT NULL DEFAULT '',
	due_date TEXT NOT NULL DEFAULT '',
	certificate TEXT NOT NULL DEFAULT '',
	UNIQUE (maker, model, serial)
);
CREATE INDEX instruments_serial ON instruments(serial);

CREATE TABLE fixture_compensations (
	id INTEGER PRIMARY KEY,
	fixture TEXT NOT NULL,
	kind TEXT NOT NULL CHECK (kind IN ('open', 'short')),
	-- 'meter': the meter's own correction ran (residuals as read before it); 'henrybench': measured here, applied to the readings
	method TEXT NOT NULL CHECK (method IN ('meter', 'henrybench')),
	instrument_id INTEGER REFERENCES instruments(id),
	at TEXT NOT NULL,
	at_unix REAL NOT NULL,
	-- JSON list: [{"freq_hz":..,"re":..,"im":..,"g_s":..,"c_f":..}] (open: admittance G + jB) or [{"freq_hz":..,"r_ohm":..,"l_h":..}] (short: R + jX)
	residuals TEXT NOT NULL DEFAULT '[]',
	operator TEXT NOT NULL DEFAULT '',
	note TEXT NOT NULL DEFAULT ''
);
CREATE INDEX fixture_comp_fixture ON fixture_compensations(fixture, at_unix);

CREATE TABLE sweep_trace (
	sweep_id INTEGER PRIMARY KEY REFERENCES sweeps(id) ON DELETE CASCADE,
	lcr_instrument_id INTEGER REFERENCES instruments(id),
	supply_instrument_id INTEGER REFERENCES instruments(id),
	-- the calibration status seen at start, e.g. "SL0001 due 2026-01-01: overdue"
	cal_status TEXT NOT NULL DEFAULT '',
	overdue_allowed INTEGER NOT NULL DEFAULT 0,
	fixture TEXT NOT NULL DEFAULT '',
	open_comp_id INTEGER REFERENCES fixture_compensations(id),
	short_comp_id INTEGER REFERENCES fixture_compensations(id),
	-- '' = compensation in force; otherwise the warning given ("missing", "stale: 30.0 h old")
	fixture_status TEXT NOT NULL DEFAULT '',
	fixture_applied INTEGER NOT NULL DEFAULT 0,
	settings_start TEXT NOT NULL DEFAULT '{}',
	settings_end TEXT NOT NULL DEFAULT '{}',
	settings_changed TEXT NOT NULL DEFAULT ''
) WITHOUT ROWID;
CREATE INDEX sweep_trace_lcr ON sweep_trace(lcr_instrument_id);
CREATE INDEX sweep_trace_supply ON sweep_trace(supply_instrument_id);

-- step 14: inspection records are appended, never replaced: a sample recorded again supersedes its earlier record, which stays with its time and operator; the lot's tally counts the records in force
-- The table is rebuilt because SQLite cannot drop the old UNIQUE (lot_id, sequence) in place.
CREATE TABLE inspections_new (
	id INTEGER PRIMARY KEY,
	lot_id INTEGER NOT NULL REFERENCES lots(id) ON DELETE CASCADE,
	sequence INTEGER NOT NULL CHECK (sequence >= 1),
	unit_id INTEGER REFERENCES units(id),
	sweep_id INTEGER REFERENCES sweeps(id),
	outcome TEXT NOT NULL CHECK (outcome IN ('pass', 'fail', 'skipped')),
	note TEXT NOT NULL DEFAULT '',
	at TEXT NOT NULL,
	at_unix REAL NOT NULL,
	conditional INTEGER NOT NULL DEFAULT 0,
	uid TEXT,
	operator TEXT NOT NULL DEFAULT '',
	superseded_by INTEGER
);
INSERT INTO inspections_new (id, lot_id, sequence, unit_id, sweep_id, outcome, note, at, at_unix, conditional, uid)
	SELECT id, lot_id, sequence, unit_id, sweep_id, outcome, note, at, at_unix, conditional, uid FROM inspections;
DROP TABLE inspections;
ALTER TABLE inspections_new RENAME TO inspections;
CREATE UNIQUE INDEX inspections_uid ON inspections(uid);
CREATE INDEX inspections_lot ON inspections(lot_id, superseded_by, sequence);
CREATE INDEX inspections_sweep ON inspections(sweep_id);
CREATE TRIGGER inspections_append AFTER INSERT ON inspections BEGIN
	UPDATE inspections SET superseded_by = NEW.id
		WHERE lot_id = NEW.lot_id AND sequence = NEW.sequence AND id <> NEW.id AND superseded_by IS NULL;
END;
-- the unlink of a deleted sweep (sweep_id, note) stays possible; the record itself does not change
CREATE TRIGGER inspections_keep BEFORE UPDATE OF lot_id, sequence, unit_id, outcome, at, at_unix, conditional,
	operator ON inspections
BEGIN
	SELECT RAISE(ABORT, 'inspection records are append-only: record the sample again to supersede one');
END;
-- step 15: many stations: what this store has pushed to which shared server (by the server's own identity), so that a sync sends only what the server lacks
CREATE TABLE sync_pushed (
	server TEXT NOT NULL,
	-- the server's table, and the record's identity (instruments and compensations: their natural key)
	tbl TEXT NOT NULL,
	uid TEXT NOT NULL,
	PRIMARY KEY (server, tbl, uid)
) WITHOUT ROWID;
-- step 16: many stations, later edits: what was pushed is noted with the version sent (an edit makes a new version, so the record waits again), and a part's drawing carries when it was last changed (the newest drawing wins between stations)
ALTER TABLE sync_pushed ADD COLUMN ver TEXT NOT NULL DEFAULT '';
ALTER TABLE part_drawing ADD COLUMN updated TEXT NOT NULL DEFAULT '';
-- edits counts the writes of the drawing, so that two edits within one second are two versions
ALTER TABLE part_drawing ADD COLUMN edits INTEGER NOT NULL DEFAULT 0;
UPDATE part_drawing SET updated = (SELECT updated FROM parts WHERE parts.id = part_drawing.part_id);
