-- SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
-- Schema version 8 (as db/008-versions.sql): versions of references, lots and probes, each a
-- new row, never an edit; a run records the reference version it was corrected with.
CREATE TABLE reference_version (
    id           bigint PRIMARY KEY,
    reference_id bigint NOT NULL REFERENCES reference(id),
    valid_from   text NOT NULL CHECK (length(valid_from) BETWEEN 10 AND 39),
    certificate  text NOT NULL CHECK (length(certificate) BETWEEN 1 AND 200),
    due_date     text,
    correction   text NOT NULL CHECK (correction IN ('none', 'linear', 'cvd')),
    lin_c0_k     double precision CONSTRAINT lin_c0_k_finite
                 CHECK (lin_c0_k BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    lin_c1       double precision CONSTRAINT lin_c1_finite
                 CHECK (lin_c1 BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    lin_t0_k     double precision CONSTRAINT lin_t0_k_finite
                 CHECK (lin_t0_k IS NULL OR (lin_t0_k > 0 AND lin_t0_k <= 1.7976931348623157e308)),
    cvd_r0_ohm   double precision CONSTRAINT cvd_r0_ohm_finite
                 CHECK (cvd_r0_ohm IS NULL OR (cvd_r0_ohm > 0
                                               AND cvd_r0_ohm <= 1.7976931348623157e308)),
    cvd_a        double precision CONSTRAINT cvd_a_finite
                 CHECK (cvd_a BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    cvd_b        double precision CONSTRAINT cvd_b_finite
                 CHECK (cvd_b BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    cvd_c        double precision CONSTRAINT cvd_c_finite
                 CHECK (cvd_c BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    why          text NOT NULL CHECK (length(why) BETWEEN 1 AND 1023),
    by_whom      text NOT NULL CHECK (length(by_whom) BETWEEN 1 AND 200),
    created_at   text NOT NULL,
    CHECK (correction <> 'linear' OR (lin_c0_k IS NOT NULL AND lin_c1 IS NOT NULL
                                      AND lin_t0_k IS NOT NULL)),
    CHECK (correction <> 'cvd' OR (cvd_r0_ohm IS NOT NULL AND cvd_a IS NOT NULL
                                   AND cvd_b IS NOT NULL AND cvd_c IS NOT NULL))
);
CREATE INDEX reference_version_of ON reference_version(reference_id, id);

CREATE TABLE lot_version (
    id          bigint PRIMARY KEY,
    lot_id      bigint NOT NULL REFERENCES lot(id),
    valid_from  text NOT NULL CHECK (length(valid_from) BETWEEN 10 AND 39),
    tol_r25     double precision NOT NULL CHECK (tol_r25 >= 0 AND tol_r25 < 1),
    tol_beta    double precision NOT NULL CHECK (tol_beta >= 0 AND tol_beta < 1),
    note        text,
    why         text NOT NULL CHECK (length(why) BETWEEN 1 AND 1023),
    by_whom     text NOT NULL CHECK (length(by_whom) BETWEEN 1 AND 200),
    created_at  text NOT NULL
);
CREATE INDEX lot_version_of ON lot_version(lot_id, id);

CREATE TABLE probe_version (
    id          bigint PRIMARY KEY,
    probe_id    bigint NOT NULL REFERENCES probe(id),
    valid_from  text NOT NULL CHECK (length(valid_from) BETWEEN 10 AND 39),
    lot_id      bigint NOT NULL REFERENCES lot(id),
    why         text NOT NULL CHECK (length(why) BETWEEN 1 AND 1023),
    by_whom     text NOT NULL CHECK (length(by_whom) BETWEEN 1 AND 200),
    created_at  text NOT NULL
);
CREATE INDEX probe_version_of ON probe_version(probe_id, id);
CREATE INDEX probe_version_lot ON probe_version(lot_id);

CREATE TRIGGER reference_version_keep BEFORE UPDATE ON reference_version FOR EACH ROW
    EXECUTE FUNCTION bandgap_refuse('versions are never edited');
CREATE TRIGGER reference_version_stay BEFORE DELETE ON reference_version FOR EACH ROW
    EXECUTE FUNCTION bandgap_refuse('versions are never deleted');
CREATE TRIGGER reference_version_clear BEFORE TRUNCATE ON reference_version FOR EACH STATEMENT
    EXECUTE FUNCTION bandgap_refuse('versions are never deleted');
CREATE TRIGGER lot_version_keep BEFORE UPDATE ON lot_version FOR EACH ROW
    EXECUTE FUNCTION bandgap_refuse('versions are never edited');
CREATE TRIGGER lot_version_stay BEFORE DELETE ON lot_version FOR EACH ROW
    EXECUTE FUNCTION bandgap_refuse('versions are never deleted');
CREATE TRIGGER lot_version_clear BEFORE TRUNCATE ON lot_version FOR EACH STATEMENT
    EXECUTE FUNCTION bandgap_refuse('versions are never deleted');
CREATE TRIGGER probe_version_keep BEFORE UPDATE ON probe_version FOR EACH ROW
    EXECUTE FUNCTION bandgap_refuse('versions are never edited');
CREATE TRIGGER probe_version_stay BEFORE DELETE ON probe_version FOR EACH ROW
    EXECUTE FUNCTION bandgap_refuse('versions are never deleted');
CREATE TRIGGER probe_version_clear BEFORE TRUNCATE ON probe_version FOR EACH STATEMENT
    EXECUTE FUNCTION bandgap_refuse('versions are never deleted');

ALTER TABLE run ADD COLUMN reference_version_id bigint REFERENCES reference_version(id);

-- PostgreSQL changes a CHECK in place: the chain's kinds widen to the version tables.
ALTER TABLE chain DROP CONSTRAINT chain_kind_check;
ALTER TABLE chain ADD CONSTRAINT chain_kind_check
    CHECK (kind IN ('lot', 'probe', 'reference', 'part_spec', 'run', 'exclusion', 'fit',
                    'artifact', 'reference_version', 'lot_version', 'probe_version'));
