-- SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
-- bandgap calibration database on a PostgreSQL server, schema version 1: the tables of
-- db/001-initial.sql (the SQLite schema) with the same names, columns and checks, in
-- PostgreSQL's types (INTEGER: bigint, REAL: double precision, TEXT: text, BLOB: bytea).
-- Ids are given by bandgap (the largest plus one, under the write lock, as SQLite gives them),
-- so that the same commands give the same ids on both backends.
-- History is append-only: triggers refuse to edit, delete or truncate readings, runs, fits,
-- exclusions and artifacts, whatever the role (the benches' role has no UPDATE or DELETE
-- rights either: docs/postgresql.md).

CREATE FUNCTION bandgap_refuse() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
    RAISE EXCEPTION '%', TG_ARGV[0] USING ERRCODE = 'integrity_constraint_violation';
END
$$;

-- The schema's own record (made by bandgap before this file runs): each migration applied,
-- once; it is never edited either.
CREATE TRIGGER bandgap_schema_keep BEFORE UPDATE OR DELETE ON bandgap_schema FOR EACH ROW
    EXECUTE FUNCTION bandgap_refuse('the schema record is never edited');
CREATE TRIGGER bandgap_schema_clear BEFORE TRUNCATE ON bandgap_schema FOR EACH STATEMENT
    EXECUTE FUNCTION bandgap_refuse('the schema record is never deleted');

CREATE TABLE lot (
    id          bigint PRIMARY KEY,
    code        text NOT NULL UNIQUE CHECK (length(code) BETWEEN 1 AND 200),
    part        text NOT NULL CHECK (length(part) BETWEEN 1 AND 200),
    r25_ohm     double precision NOT NULL CHECK (r25_ohm > 0),
    beta_k      double precision NOT NULL CHECK (beta_k > 0),
    pair_t1_k   double precision NOT NULL CHECK (pair_t1_k > 0),
    pair_t2_k   double precision NOT NULL CHECK (pair_t2_k > 0 AND pair_t2_k <> pair_t1_k),
    tol_r25     double precision NOT NULL CHECK (tol_r25 >= 0 AND tol_r25 < 1),
    tol_beta    double precision NOT NULL CHECK (tol_beta >= 0 AND tol_beta < 1),
    note        text,
    created_at  text NOT NULL
);

CREATE TABLE probe (
    id          bigint PRIMARY KEY,
    serial      text NOT NULL UNIQUE CHECK (length(serial) BETWEEN 1 AND 200),
    lot_id      bigint NOT NULL REFERENCES lot(id),
    note        text,
    created_at  text NOT NULL
);
CREATE INDEX probe_lot ON probe(lot_id);

CREATE TABLE reference (
    id          bigint PRIMARY KEY,
    ident       text NOT NULL UNIQUE CHECK (length(ident) BETWEEN 1 AND 200),
    certificate text NOT NULL CHECK (length(certificate) BETWEEN 1 AND 200),
    due_date    text,
    correction  text NOT NULL CHECK (correction IN ('none', 'linear', 'cvd')),
    lin_c0_k    double precision,
    lin_c1      double precision,
    lin_t0_k    double precision CHECK (lin_t0_k IS NULL OR lin_t0_k > 0),
    cvd_r0_ohm  double precision CHECK (cvd_r0_ohm IS NULL OR cvd_r0_ohm > 0),
    cvd_a       double precision,
    cvd_b       double precision,
    cvd_c       double precision,
    note        text,
    created_at  text NOT NULL,
    CHECK (correction <> 'linear' OR (lin_c0_k IS NOT NULL AND lin_c1 IS NOT NULL
                                      AND lin_t0_k IS NOT NULL)),
    CHECK (correction <> 'cvd' OR (cvd_r0_ohm IS NOT NULL AND cvd_a IS NOT NULL
                                   AND cvd_b IS NOT NULL AND cvd_c IS NOT NULL))
);

CREATE TABLE run (
    id           bigint PRIMARY KEY,
    probe_id     bigint NOT NULL REFERENCES probe(id),
    reference_id bigint REFERENCES reference(id),
    operator     text,
    medium       text,
    ambient      text,
    excitation   text,
    started_at   text NOT NULL,
    source       text NOT NULL,
    t_raw_unit   text NOT NULL CHECK (t_raw_unit IN ('K', 'C', 'F', 'ohm')),
    first_reading bigint NOT NULL CHECK (first_reading > 0),
    nreadings    bigint NOT NULL CHECK (nreadings > 0),
    note         text,
    imported_at  text NOT NULL
);
CREATE INDEX run_probe ON run(probe_id);

CREATE TABLE reading (
    id          bigint PRIMARY KEY,
    run_id      bigint NOT NULL REFERENCES run(id),
    line        bigint NOT NULL CHECK (line > 0),
    t_raw       double precision NOT NULL,
    t_k         double precision NOT NULL CHECK (t_k > 0),
    r_ohm       double precision NOT NULL CHECK (r_ohm > 0),
    u_t_k       double precision NOT NULL CHECK (u_t_k >= 0),
    u_r_ohm     double precision NOT NULL CHECK (u_r_ohm >= 0),
    time        text,
    note        text
);
-- SQLite finds a run's readings by their id range alone; the record chain reads them by run
CREATE INDEX reading_run ON reading(run_id, id);

CREATE TABLE exclusion (
    reading_id  bigint PRIMARY KEY REFERENCES reading(id),
    reason      text NOT NULL CHECK (length(reason) > 0),
    by_whom     text NOT NULL,
    at          text NOT NULL
);

CREATE TABLE fit (
    id              bigint PRIMARY KEY,
    run_id          bigint NOT NULL REFERENCES run(id),
    model           text NOT NULL,
    t0_k            double precision,
    npar            bigint NOT NULL CHECK (npar BETWEEN 2 AND 6),
    c0 double precision NOT NULL, c1 double precision NOT NULL, c2 double precision,
    c3 double precision, c4 double precision, c5 double precision,
    cov             bytea CHECK (cov IS NULL OR length(cov) = 8 * npar * npar),
    n               bigint NOT NULL CHECK (n > 0),
    dof             bigint NOT NULL CHECK (dof >= 0),
    weighted        bigint NOT NULL CHECK (weighted IN (0, 1)),
    chi2            double precision NOT NULL,
    cov_scale       double precision,
    rms_mk          double precision NOT NULL,
    max_abs_mk      double precision NOT NULL,
    t_min_k         double precision NOT NULL,
    t_max_k         double precision NOT NULL,
    reading_ids     text NOT NULL CHECK (substr(reading_ids, 1, 1) = '['),
    program_version text NOT NULL,
    created_at      text NOT NULL
);
CREATE INDEX fit_run ON fit(run_id);

CREATE TABLE artifact (
    id          bigint PRIMARY KEY,
    kind        text NOT NULL,
    fit_id      bigint REFERENCES fit(id),
    spec        text NOT NULL,
    content     bytea NOT NULL,
    max_error_k double precision,
    replaces_id bigint REFERENCES artifact(id),
    program_version text NOT NULL,
    created_at  text NOT NULL
);

CREATE TRIGGER reading_keep BEFORE UPDATE ON reading FOR EACH ROW
    EXECUTE FUNCTION bandgap_refuse('readings are never edited');
CREATE TRIGGER reading_stay BEFORE DELETE ON reading FOR EACH ROW
    EXECUTE FUNCTION bandgap_refuse('readings are never deleted');
CREATE TRIGGER reading_clear BEFORE TRUNCATE ON reading FOR EACH STATEMENT
    EXECUTE FUNCTION bandgap_refuse('readings are never deleted');
CREATE TRIGGER run_keep BEFORE UPDATE ON run FOR EACH ROW
    EXECUTE FUNCTION bandgap_refuse('runs are never edited');
CREATE TRIGGER run_stay BEFORE DELETE ON run FOR EACH ROW
    EXECUTE FUNCTION bandgap_refuse('runs are never deleted');
CREATE TRIGGER run_clear BEFORE TRUNCATE ON run FOR EACH STATEMENT
    EXECUTE FUNCTION bandgap_refuse('runs are never deleted');
CREATE TRIGGER fit_keep BEFORE UPDATE ON fit FOR EACH ROW
    EXECUTE FUNCTION bandgap_refuse('fits are never edited');
CREATE TRIGGER fit_stay BEFORE DELETE ON fit FOR EACH ROW
    EXECUTE FUNCTION bandgap_refuse('fits are never deleted');
CREATE TRIGGER fit_clear BEFORE TRUNCATE ON fit FOR EACH STATEMENT
    EXECUTE FUNCTION bandgap_refuse('fits are never deleted');
CREATE TRIGGER exclusion_keep BEFORE UPDATE ON exclusion FOR EACH ROW
    EXECUTE FUNCTION bandgap_refuse('exclusions are never edited');
CREATE TRIGGER exclusion_stay BEFORE DELETE ON exclusion FOR EACH ROW
    EXECUTE FUNCTION bandgap_refuse('exclusions are never deleted');
CREATE TRIGGER exclusion_clear BEFORE TRUNCATE ON exclusion FOR EACH STATEMENT
    EXECUTE FUNCTION bandgap_refuse('exclusions are never deleted');
CREATE TRIGGER artifact_keep BEFORE UPDATE ON artifact FOR EACH ROW
    EXECUTE FUNCTION bandgap_refuse('issued artifacts never change');
CREATE TRIGGER artifact_stay BEFORE DELETE ON artifact FOR EACH ROW
    EXECUTE FUNCTION bandgap_refuse('issued artifacts are never deleted');
CREATE TRIGGER artifact_clear BEFORE TRUNCATE ON artifact FOR EACH STATEMENT
    EXECUTE FUNCTION bandgap_refuse('issued artifacts are never deleted');
