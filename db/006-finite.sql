-- SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
-- Schema: every REAL column refuses infinities (and NaN, which SQLite stores as NULL, so that a
-- NOT NULL column already refuses it).  A finite double lies between -1.7976931348623157e308
-- and 1.7976931348623157e308 (the largest finite IEEE 754 binary64 value, DBL_MAX); +-Inf lie
-- outside.  Each check is named after its column ('r25_ohm_finite'), so that a refusal names
-- the field.  (The covariance BLOB of a fit holds doubles the library checks before it writes.)
--
-- SQLite cannot add a CHECK to a table, so each table with REAL columns is made again with the
-- same columns in the same order, the same constraints plus the new ones, and the same rows
-- and ids; then its indexes and the append-only triggers are made again exactly as before.
-- Tables without REAL columns (probe, exclusion) are kept as they are.
--
-- Foreign keys are off while a migration runs (SQLite's procedure for making a table again).
-- The old tables are renamed first with legacy_alter_table on, so that the references of the
-- other tables (REFERENCES lot(id), the view probe_latest_run) keep naming 'lot', 'run', ...
-- and so find the new tables; then the rows are copied in id order and the old tables
-- dropped.  Before the end every reference is checked (pragma_foreign_key_check): one that
-- does not resolve fails the check 'references_intact'.  The whole file runs in the
-- migration's one transaction: on any error nothing of it remains.  An existing row with an
-- infinite value makes the migration fail, naming the check, and the file stays at the older
-- version.
PRAGMA legacy_alter_table = ON;

ALTER TABLE lot RENAME TO lot_old;
ALTER TABLE reference RENAME TO reference_old;
ALTER TABLE run RENAME TO run_old;
ALTER TABLE reading RENAME TO reading_old;
ALTER TABLE fit RENAME TO fit_old;
ALTER TABLE artifact RENAME TO artifact_old;
ALTER TABLE part_spec RENAME TO part_spec_old;

CREATE TABLE lot (
    id          INTEGER PRIMARY KEY,
    code        TEXT NOT NULL UNIQUE CHECK (length(code) BETWEEN 1 AND 200),
    part        TEXT NOT NULL CHECK (length(part) BETWEEN 1 AND 200),
    r25_ohm     REAL NOT NULL CHECK (r25_ohm > 0)
        CONSTRAINT r25_ohm_finite CHECK (r25_ohm <= 1.7976931348623157e308),
    beta_k      REAL NOT NULL CHECK (beta_k > 0)
        CONSTRAINT beta_k_finite CHECK (beta_k <= 1.7976931348623157e308),
    pair_t1_k   REAL NOT NULL CHECK (pair_t1_k > 0)
        CONSTRAINT pair_t1_k_finite CHECK (pair_t1_k <= 1.7976931348623157e308),
    pair_t2_k   REAL NOT NULL CHECK (pair_t2_k > 0 AND pair_t2_k <> pair_t1_k)
        CONSTRAINT pair_t2_k_finite CHECK (pair_t2_k <= 1.7976931348623157e308),
    tol_r25     REAL NOT NULL CHECK (tol_r25 >= 0 AND tol_r25 < 1),
    tol_beta    REAL NOT NULL CHECK (tol_beta >= 0 AND tol_beta < 1),
    note        TEXT,
    created_at  TEXT NOT NULL
) STRICT;

CREATE TABLE reference (
    id          INTEGER PRIMARY KEY,
    ident       TEXT NOT NULL UNIQUE CHECK (length(ident) BETWEEN 1 AND 200),
    certificate TEXT NOT NULL CHECK (length(certificate) BETWEEN 1 AND 200),
    due_date    TEXT,
    correction  TEXT NOT NULL CHECK (correction IN ('none', 'linear', 'cvd')),
    lin_c0_k    REAL CONSTRAINT lin_c0_k_finite
        CHECK (lin_c0_k BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    lin_c1      REAL CONSTRAINT lin_c1_finite
        CHECK (lin_c1 BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    lin_t0_k    REAL CHECK (lin_t0_k IS NULL OR lin_t0_k > 0)
        CONSTRAINT lin_t0_k_finite CHECK (lin_t0_k <= 1.7976931348623157e308),
    cvd_r0_ohm  REAL CHECK (cvd_r0_ohm IS NULL OR cvd_r0_ohm > 0)
        CONSTRAINT cvd_r0_ohm_finite CHECK (cvd_r0_ohm <= 1.7976931348623157e308),
    cvd_a       REAL CONSTRAINT cvd_a_finite
        CHECK (cvd_a BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    cvd_b       REAL CONSTRAINT cvd_b_finite
        CHECK (cvd_b BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    cvd_c       REAL CONSTRAINT cvd_c_finite
        CHECK (cvd_c BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    note        TEXT,
    created_at  TEXT NOT NULL,
    CHECK (correction <> 'linear' OR (lin_c0_k IS NOT NULL AND lin_c1 IS NOT NULL
                                      AND lin_t0_k IS NOT NULL)),
    CHECK (correction <> 'cvd' OR (cvd_r0_ohm IS NOT NULL AND cvd_a IS NOT NULL
                                   AND cvd_b IS NOT NULL AND cvd_c IS NOT NULL))
) STRICT;

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
    first_reading INTEGER NOT NULL CHECK (first_reading > 0),
    nreadings    INTEGER NOT NULL CHECK (nreadings > 0),
    note         TEXT,
    imported_at  TEXT NOT NULL,
    readings_sha256 TEXT CHECK (readings_sha256 IS NULL OR length(readings_sha256) = 64),
    repeats_run  INTEGER REFERENCES run(id),
    ref_overdue  TEXT CHECK (ref_overdue IS NULL OR length(ref_overdue) BETWEEN 1 AND 1023),
    measuring_current_a REAL CHECK (measuring_current_a > 0)
        CONSTRAINT measuring_current_a_finite
        CHECK (measuring_current_a <= 1.7976931348623157e308),
    measuring_voltage_v REAL
        CHECK (measuring_voltage_v IS NULL
               OR (measuring_voltage_v > 0 AND measuring_current_a IS NULL))
        CONSTRAINT measuring_voltage_v_finite
        CHECK (measuring_voltage_v <= 1.7976931348623157e308)
) STRICT;

CREATE TABLE reading (
    id          INTEGER PRIMARY KEY,
    run_id      INTEGER NOT NULL REFERENCES run(id),
    line        INTEGER NOT NULL CHECK (line > 0),
    t_raw       REAL NOT NULL CONSTRAINT t_raw_finite
        CHECK (t_raw BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    t_k         REAL NOT NULL CHECK (t_k > 0)
        CONSTRAINT t_k_finite CHECK (t_k <= 1.7976931348623157e308),
    r_ohm       REAL NOT NULL CHECK (r_ohm > 0)
        CONSTRAINT r_ohm_finite CHECK (r_ohm <= 1.7976931348623157e308),
    u_t_k       REAL NOT NULL CHECK (u_t_k >= 0)
        CONSTRAINT u_t_k_finite CHECK (u_t_k <= 1.7976931348623157e308),
    u_r_ohm     REAL NOT NULL CHECK (u_r_ohm >= 0)
        CONSTRAINT u_r_ohm_finite CHECK (u_r_ohm <= 1.7976931348623157e308),
    time        TEXT,
    note        TEXT
) STRICT;

CREATE TABLE fit (
    id              INTEGER PRIMARY KEY,
    run_id          INTEGER NOT NULL REFERENCES run(id),
    model           TEXT NOT NULL,
    t0_k            REAL CONSTRAINT t0_k_finite
        CHECK (t0_k BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    npar            INTEGER NOT NULL CHECK (npar BETWEEN 2 AND 6),
    c0 REAL NOT NULL CONSTRAINT c0_finite
        CHECK (c0 BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    c1 REAL NOT NULL CONSTRAINT c1_finite
        CHECK (c1 BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    c2 REAL CONSTRAINT c2_finite
        CHECK (c2 BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    c3 REAL CONSTRAINT c3_finite
        CHECK (c3 BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    c4 REAL CONSTRAINT c4_finite
        CHECK (c4 BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    c5 REAL CONSTRAINT c5_finite
        CHECK (c5 BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    cov             BLOB CHECK (cov IS NULL OR length(cov) = 8 * npar * npar),
    n               INTEGER NOT NULL CHECK (n > 0),
    dof             INTEGER NOT NULL CHECK (dof >= 0),
    weighted        INTEGER NOT NULL CHECK (weighted IN (0, 1)),
    chi2            REAL NOT NULL CONSTRAINT chi2_finite
        CHECK (chi2 BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    cov_scale       REAL CONSTRAINT cov_scale_finite
        CHECK (cov_scale BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    rms_mk          REAL NOT NULL CONSTRAINT rms_mk_finite
        CHECK (rms_mk BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    max_abs_mk      REAL NOT NULL CONSTRAINT max_abs_mk_finite
        CHECK (max_abs_mk BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    t_min_k         REAL NOT NULL CONSTRAINT t_min_k_finite
        CHECK (t_min_k BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    t_max_k         REAL NOT NULL CONSTRAINT t_max_k_finite
        CHECK (t_max_k BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    reading_ids     TEXT NOT NULL CHECK (substr(reading_ids, 1, 1) = '['),
    program_version TEXT NOT NULL,
    created_at      TEXT NOT NULL
) STRICT;

CREATE TABLE artifact (
    id          INTEGER PRIMARY KEY,
    kind        TEXT NOT NULL,
    fit_id      INTEGER REFERENCES fit(id),
    spec        TEXT NOT NULL,
    content     BLOB NOT NULL,
    max_error_k REAL CONSTRAINT max_error_k_finite
        CHECK (max_error_k BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    replaces_id INTEGER REFERENCES artifact(id),
    program_version TEXT NOT NULL,
    created_at  TEXT NOT NULL
) STRICT;

CREATE TABLE part_spec (
    id          INTEGER PRIMARY KEY,
    part        TEXT NOT NULL CHECK (length(part) BETWEEN 1 AND 200),
    model       TEXT,
    t0_k        REAL CONSTRAINT t0_k_finite
        CHECK (t0_k BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    npar        INTEGER CHECK (npar IS NULL OR npar BETWEEN 2 AND 6),
    c0 REAL CONSTRAINT c0_finite
        CHECK (c0 BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    c1 REAL CONSTRAINT c1_finite
        CHECK (c1 BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    c2 REAL CONSTRAINT c2_finite
        CHECK (c2 BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    c3 REAL CONSTRAINT c3_finite
        CHECK (c3 BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    c4 REAL CONSTRAINT c4_finite
        CHECK (c4 BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    c5 REAL CONSTRAINT c5_finite
        CHECK (c5 BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    source      TEXT,
    tol_k       REAL CHECK (tol_k IS NULL OR tol_k > 0)
        CONSTRAINT tol_k_finite CHECK (tol_k <= 1.7976931348623157e308),
    tol_lo_k    REAL CHECK (tol_lo_k IS NULL OR tol_lo_k > 0)
        CONSTRAINT tol_lo_k_finite CHECK (tol_lo_k <= 1.7976931348623157e308),
    tol_hi_k    REAL CHECK (tol_hi_k IS NULL OR tol_hi_k > tol_lo_k)
        CONSTRAINT tol_hi_k_finite CHECK (tol_hi_k <= 1.7976931348623157e308),
    baseline    INTEGER CHECK (baseline IS NULL OR baseline > 0),
    limit_k     REAL CHECK (limit_k IS NULL OR limit_k > 0)
        CONSTRAINT limit_k_finite CHECK (limit_k <= 1.7976931348623157e308),
    rate_k      REAL CHECK (rate_k IS NULL OR rate_k > 0)
        CONSTRAINT rate_k_finite CHECK (rate_k <= 1.7976931348623157e308),
    note        TEXT,
    created_at  TEXT NOT NULL,
    CHECK ((model IS NULL) = (npar IS NULL) AND (model IS NULL OR (c0 IS NOT NULL
                                                                  AND c1 IS NOT NULL))),
    CHECK ((tol_k IS NULL) = (tol_lo_k IS NULL) AND (tol_k IS NULL) = (tol_hi_k IS NULL))
) STRICT;

INSERT INTO lot SELECT * FROM lot_old ORDER BY id;
INSERT INTO reference SELECT * FROM reference_old ORDER BY id;
INSERT INTO run SELECT * FROM run_old ORDER BY id;
INSERT INTO reading SELECT * FROM reading_old ORDER BY id;
INSERT INTO fit SELECT * FROM fit_old ORDER BY id;
INSERT INTO artifact SELECT * FROM artifact_old ORDER BY id;
INSERT INTO part_spec SELECT * FROM part_spec_old ORDER BY id;

-- dropping a table drops its indexes and triggers; they are made again below
DROP TABLE part_spec_old;
DROP TABLE artifact_old;
DROP TABLE fit_old;
DROP TABLE reading_old;
DROP TABLE run_old;
DROP TABLE reference_old;
DROP TABLE lot_old;
PRAGMA legacy_alter_table = OFF;

CREATE TEMP TABLE migration_check (
    broken INTEGER CONSTRAINT references_intact CHECK (broken = 0)
);
INSERT INTO migration_check SELECT count(*) FROM pragma_foreign_key_check;
DROP TABLE migration_check;

CREATE INDEX run_probe ON run(probe_id);
CREATE INDEX run_probe_time ON run(probe_id, started_at, id);
CREATE INDEX run_probe_digest ON run(probe_id, readings_sha256);
CREATE INDEX fit_run ON fit(run_id);
CREATE INDEX part_spec_part ON part_spec(part, created_at, id);

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
CREATE TRIGGER artifact_keep BEFORE UPDATE ON artifact
    BEGIN SELECT RAISE(ABORT, 'issued artifacts never change'); END;
CREATE TRIGGER artifact_stay BEFORE DELETE ON artifact
    BEGIN SELECT RAISE(ABORT, 'issued artifacts are never deleted'); END;
CREATE TRIGGER part_spec_keep BEFORE UPDATE ON part_spec
    BEGIN SELECT RAISE(ABORT, 'part specifications are never edited'); END;
CREATE TRIGGER part_spec_stay BEFORE DELETE ON part_spec
    BEGIN SELECT RAISE(ABORT, 'part specifications are never deleted'); END;
