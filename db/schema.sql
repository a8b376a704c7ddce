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

-- step 7: traceability: the instrument register (from *IDN?, with calibration status and an accuracy override), fixture compensations, and per sweep the instruments, compensation and settings read back
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
