-- SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
-- bandgap calibration database, schema version 1.
-- Units are in the column names (t_k: kelvin, r_ohm: ohm).  Times are ISO 8601 text.
-- History is append-only: triggers refuse to edit or delete readings, runs, fits and
-- exclusions; a new fit is a new row that records exactly the readings it used (as a list
-- of reading ids in the row itself: one row per fit keeps fitting a large lot fast).

CREATE TABLE lot (
    id          INTEGER PRIMARY KEY,
    code        TEXT NOT NULL UNIQUE CHECK (length(code) BETWEEN 1 AND 200),
    part        TEXT NOT NULL CHECK (length(part) BETWEEN 1 AND 200),
    r25_ohm     REAL NOT NULL CHECK (r25_ohm > 0),
    beta_k      REAL NOT NULL CHECK (beta_k > 0),
    pair_t1_k   REAL NOT NULL CHECK (pair_t1_k > 0),
    pair_t2_k   REAL NOT NULL CHECK (pair_t2_k > 0 AND pair_t2_k <> pair_t1_k),
    tol_r25     REAL NOT NULL CHECK (tol_r25 >= 0 AND tol_r25 < 1),
    tol_beta    REAL NOT NULL CHECK (tol_beta >= 0 AND tol_beta < 1),
    note        TEXT,
    created_at  TEXT NOT NULL
) STRICT;

CREATE TABLE probe (
    id          INTEGER PRIMARY KEY,
    serial      TEXT NOT NULL UNIQUE CHECK (length(serial) BETWEEN 1 AND 200),
    lot_id      INTEGER NOT NULL REFERENCES lot(id),
    note        TEXT,
    created_at  TEXT NOT NULL
) STRICT;
CREATE INDEX probe_lot ON probe(lot_id);

-- Reference thermometers.  correction: 'none'; 'linear' (t = t_read + c0 + c1 (t_read - t0),
-- the GUM H.3 form); 'cvd' (the reference is read as a platinum resistance, converted with
-- IEC 60751 Callendar-Van Dusen coefficients).
CREATE TABLE reference (
    id          INTEGER PRIMARY KEY,
    ident       TEXT NOT NULL UNIQUE CHECK (length(ident) BETWEEN 1 AND 200),
    certificate TEXT NOT NULL CHECK (length(certificate) BETWEEN 1 AND 200),
    due_date    TEXT,
    correction  TEXT NOT NULL CHECK (correction IN ('none', 'linear', 'cvd')),
    lin_c0_k    REAL,
    lin_c1      REAL,
    lin_t0_k    REAL CHECK (lin_t0_k IS NULL OR lin_t0_k > 0),
    cvd_r0_ohm  REAL CHECK (cvd_r0_ohm IS NULL OR cvd_r0_ohm > 0),
    cvd_a       REAL,
    cvd_b       REAL,
    cvd_c       REAL,
    note        TEXT,
    created_at  TEXT NOT NULL,
    CHECK (correction <> 'linear' OR (lin_c0_k IS NOT NULL AND lin_c1 IS NOT NULL
                                      AND lin_t0_k IS NOT NULL)),
    CHECK (correction <> 'cvd' OR (cvd_r0_ohm IS NOT NULL AND cvd_a IS NOT NULL
                                   AND cvd_b IS NOT NULL AND cvd_c IS NOT NULL))
) STRICT;

-- One calibration session of one probe.
CREATE TABLE run (
    id           INTEGER PRIMARY KEY,
    probe_id     INTEGER NOT NULL REFERENCES probe(id),
    reference_id INTEGER REFERENCES reference(id),
    operator     TEXT,
    medium       TEXT,
    ambient      TEXT,
    excitation   TEXT,
    started_at   TEXT NOT NULL,
    source       TEXT NOT NULL,
    t_raw_unit   TEXT NOT NULL CHECK (t_raw_unit IN ('K', 'C', 'F', 'ohm')),
    -- the run's readings are the contiguous ids first_reading .. first_reading + nreadings - 1
    -- (assigned inside the import's write transaction): queries read them as one range of
    -- the reading table, so no index on reading.run_id is needed
    first_reading INTEGER NOT NULL CHECK (first_reading > 0),
    nreadings    INTEGER NOT NULL CHECK (nreadings > 0),
    note         TEXT,
    imported_at  TEXT NOT NULL
) STRICT;
CREATE INDEX run_probe ON run(probe_id);

-- t_raw is the reference as read, in the run's t_raw_unit (the file's temperature unit, or
-- ohm for a platinum reference read as a resistance); t_k is the corrected temperature.
CREATE TABLE reading (
    id          INTEGER PRIMARY KEY,
    run_id      INTEGER NOT NULL REFERENCES run(id),
    line        INTEGER NOT NULL CHECK (line > 0),
    t_raw       REAL NOT NULL,
    t_k         REAL NOT NULL CHECK (t_k > 0),
    r_ohm       REAL NOT NULL CHECK (r_ohm > 0),
    u_t_k       REAL NOT NULL CHECK (u_t_k >= 0),
    u_r_ohm     REAL NOT NULL CHECK (u_r_ohm >= 0),
    time        TEXT,
    note        TEXT
) STRICT;

CREATE TABLE exclusion (
    reading_id  INTEGER PRIMARY KEY REFERENCES reading(id),
    reason      TEXT NOT NULL CHECK (length(reason) > 0),
    by_whom     TEXT NOT NULL,
    at          TEXT NOT NULL
) STRICT;

CREATE TABLE fit (
    id              INTEGER PRIMARY KEY,
    run_id          INTEGER NOT NULL REFERENCES run(id),
    model           TEXT NOT NULL,
    t0_k            REAL,
    npar            INTEGER NOT NULL CHECK (npar BETWEEN 2 AND 6),
    c0 REAL NOT NULL, c1 REAL NOT NULL, c2 REAL, c3 REAL, c4 REAL, c5 REAL,
    cov             BLOB CHECK (cov IS NULL OR length(cov) = 8 * npar * npar),
                                     -- row-major npar x npar IEEE doubles, little-endian;
                                     -- NULL when dof = 0
    n               INTEGER NOT NULL CHECK (n > 0),
    dof             INTEGER NOT NULL CHECK (dof >= 0),
    weighted        INTEGER NOT NULL CHECK (weighted IN (0, 1)),
    chi2            REAL NOT NULL,
    cov_scale       REAL,
    rms_mk          REAL NOT NULL,
    max_abs_mk      REAL NOT NULL,
    t_min_k         REAL NOT NULL,
    t_max_k         REAL NOT NULL,
    -- exactly the readings the fit used: a JSON array of reading ids, ascending
    reading_ids     TEXT NOT NULL CHECK (substr(reading_ids, 1, 1) = '['),
    program_version TEXT NOT NULL,
    created_at      TEXT NOT NULL
) STRICT;
CREATE INDEX fit_run ON fit(run_id);


-- Generated tables and issued reports, with the spec that made them and their error.
CREATE TABLE artifact (
    id          INTEGER PRIMARY KEY,
    kind        TEXT NOT NULL,
    fit_id      INTEGER REFERENCES fit(id),
    spec        TEXT NOT NULL,
    content     BLOB NOT NULL,
    max_error_k REAL,
    replaces_id INTEGER REFERENCES artifact(id),
    program_version TEXT NOT NULL,
    created_at  TEXT NOT NULL
) STRICT;

CREATE TRIGGER reading_keep BEFORE UPDATE ON reading
    BEGIN SELECT RAISE(ABORT, 'readings are never edited'); END;
CREATE TRIGGER reading_stay BEFORE DELETE ON reading
    BEGIN SELECT RAISE(ABORT, 'readings are never deleted'); END;
CREATE TRIGGER run_keep BEFORE UPDATE ON run
    BEGIN SELECT RAISE(ABORT, 'runs are never edited'); END;
CREATE TRIGGER run_stay BEFORE DELETE ON run
    BEGIN SELECT RAISE(ABORT, 'runs are never deleted'); END;
CREATE TRIGGER fit_keep BEFORE UPDATE ON fit
    BEGIN SELECT RAISE(ABORT, 'fits are never edited'); END;
CREATE TRIGGER fit_stay BEFORE DELETE ON fit
    BEGIN SELECT RAISE(ABORT, 'fits are never deleted'); END;
CREATE TRIGGER exclusion_keep BEFORE UPDATE ON exclusion
    BEGIN SELECT RAISE(ABORT, 'exclusions are never edited'); END;
CREATE TRIGGER exclusion_stay BEFORE DELETE ON exclusion
    BEGIN SELECT RAISE(ABORT, 'exclusions are never deleted'); END;
CREATE TRIGGER artifact_keep BEFORE UPDATE ON artifact
    BEGIN SELECT RAISE(ABORT, 'issued artifacts never change'); END;
CREATE TRIGGER artifact_stay BEFORE DELETE ON artifact
    BEGIN SELECT RAISE(ABORT, 'issued artifacts are never deleted'); END;
