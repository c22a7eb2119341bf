-- SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
-- Schema version 9: a reference thermometer may be a standard platinum resistance thermometer
-- read through ITS-90 (correction 'its90'): its resistance at the triple point of water
-- (its90_rtpw_ohm), the sub-range of the scale it was calibrated on (its90_range: 'Ar-TPW',
-- 'Hg-TPW', 'Hg-Ga', 'TPW-Ga', 'TPW-In', 'TPW-Sn', 'TPW-Zn', 'TPW-Al', 'TPW-Ag') and the
-- coefficients of that sub-range's deviation function (its90_a .. its90_d; its90_w_al, the
-- thermometer's W at the aluminium point, for TPW-Ag).  The same columns go on the reference's
-- versions.  Rows already there keep every value (the new columns are NULL, which a record's
-- chain encoding skips, so the chain's hashes stay as they were).
--
-- SQLite cannot change a CHECK, so 'reference' and 'reference_version' are made again as in
-- 006-finite.sql: renamed with legacy_alter_table on (the runs' references keep naming them),
-- made again with the new columns last, the rows copied in id order, the old tables dropped,
-- every reference checked, the indexes and append-only triggers made again as before.
PRAGMA legacy_alter_table = ON;
ALTER TABLE reference RENAME TO reference_old;
ALTER TABLE reference_version RENAME TO reference_version_old;

CREATE TABLE reference (
    id          INTEGER PRIMARY KEY,
    ident       TEXT NOT NULL UNIQUE CHECK (length(ident) BETWEEN 1 AND 200),
    certificate TEXT NOT NULL CHECK (length(certificate) BETWEEN 1 AND 200),
    due_date    TEXT,
    correction  TEXT NOT NULL CHECK (correction IN ('none', 'linear', 'cvd', 'its90')),
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
    its90_rtpw_ohm REAL CHECK (its90_rtpw_ohm IS NULL OR its90_rtpw_ohm > 0)
        CONSTRAINT its90_rtpw_ohm_finite CHECK (its90_rtpw_ohm <= 1.7976931348623157e308),
    its90_range TEXT CHECK (its90_range IS NULL OR its90_range IN ('Ar-TPW', 'Hg-TPW', 'Hg-Ga',
        'TPW-Ga', 'TPW-In', 'TPW-Sn', 'TPW-Zn', 'TPW-Al', 'TPW-Ag')),
    its90_a     REAL CONSTRAINT its90_a_finite
        CHECK (its90_a BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    its90_b     REAL CONSTRAINT its90_b_finite
        CHECK (its90_b BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    its90_c     REAL CONSTRAINT its90_c_finite
        CHECK (its90_c BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    its90_d     REAL CONSTRAINT its90_d_finite
        CHECK (its90_d BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    its90_w_al  REAL CHECK (its90_w_al IS NULL OR its90_w_al > 0)
        CONSTRAINT its90_w_al_finite CHECK (its90_w_al <= 1.7976931348623157e308),
    CHECK (correction <> 'linear' OR (lin_c0_k IS NOT NULL AND lin_c1 IS NOT NULL
                                      AND lin_t0_k IS NOT NULL)),
    CHECK (correction <> 'cvd' OR (cvd_r0_ohm IS NOT NULL AND cvd_a IS NOT NULL
                                   AND cvd_b IS NOT NULL AND cvd_c IS NOT NULL)),
    CHECK (correction <> 'its90' OR (its90_rtpw_ohm IS NOT NULL AND its90_range IS NOT NULL
                                     AND its90_a IS NOT NULL))
) STRICT;

CREATE TABLE reference_version (
    id           INTEGER PRIMARY KEY,
    reference_id INTEGER NOT NULL REFERENCES reference(id),
    valid_from   TEXT NOT NULL CHECK (length(valid_from) BETWEEN 10 AND 39),
    certificate  TEXT NOT NULL CHECK (length(certificate) BETWEEN 1 AND 200),
    due_date     TEXT,
    correction   TEXT NOT NULL CHECK (correction IN ('none', 'linear', 'cvd', 'its90')),
    lin_c0_k     REAL CONSTRAINT lin_c0_k_finite
                 CHECK (lin_c0_k BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    lin_c1       REAL CONSTRAINT lin_c1_finite
                 CHECK (lin_c1 BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    lin_t0_k     REAL CONSTRAINT lin_t0_k_finite
                 CHECK (lin_t0_k IS NULL OR (lin_t0_k > 0 AND lin_t0_k <= 1.7976931348623157e308)),
    cvd_r0_ohm   REAL CONSTRAINT cvd_r0_ohm_finite
                 CHECK (cvd_r0_ohm IS NULL OR (cvd_r0_ohm > 0
                                               AND cvd_r0_ohm <= 1.7976931348623157e308)),
    cvd_a        REAL CONSTRAINT cvd_a_finite
                 CHECK (cvd_a BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    cvd_b        REAL CONSTRAINT cvd_b_finite
                 CHECK (cvd_b BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    cvd_c        REAL CONSTRAINT cvd_c_finite
                 CHECK (cvd_c BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    why          TEXT NOT NULL CHECK (length(why) BETWEEN 1 AND 1023),
    by_whom      TEXT NOT NULL CHECK (length(by_whom) BETWEEN 1 AND 200),
    created_at   TEXT NOT NULL,
    its90_rtpw_ohm REAL CHECK (its90_rtpw_ohm IS NULL OR its90_rtpw_ohm > 0)
        CONSTRAINT its90_rtpw_ohm_finite CHECK (its90_rtpw_ohm <= 1.7976931348623157e308),
    its90_range TEXT CHECK (its90_range IS NULL OR its90_range IN ('Ar-TPW', 'Hg-TPW', 'Hg-Ga',
        'TPW-Ga', 'TPW-In', 'TPW-Sn', 'TPW-Zn', 'TPW-Al', 'TPW-Ag')),
    its90_a     REAL CONSTRAINT its90_a_finite
        CHECK (its90_a BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    its90_b     REAL CONSTRAINT its90_b_finite
        CHECK (its90_b BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    its90_c     REAL CONSTRAINT its90_c_finite
        CHECK (its90_c BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    its90_d     REAL CONSTRAINT its90_d_finite
        CHECK (its90_d BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    its90_w_al  REAL CHECK (its90_w_al IS NULL OR its90_w_al > 0)
        CONSTRAINT its90_w_al_finite CHECK (its90_w_al <= 1.7976931348623157e308),
    CHECK (correction <> 'linear' OR (lin_c0_k IS NOT NULL AND lin_c1 IS NOT NULL
                                      AND lin_t0_k IS NOT NULL)),
    CHECK (correction <> 'cvd' OR (cvd_r0_ohm IS NOT NULL AND cvd_a IS NOT NULL
                                   AND cvd_b IS NOT NULL AND cvd_c IS NOT NULL)),
    CHECK (correction <> 'its90' OR (its90_rtpw_ohm IS NOT NULL AND its90_range IS NOT NULL
                                     AND its90_a IS NOT NULL))
) STRICT;

INSERT INTO reference (id, ident, certificate, due_date, correction, lin_c0_k, lin_c1,
                       lin_t0_k, cvd_r0_ohm, cvd_a, cvd_b, cvd_c, note, created_at)
    SELECT id, ident, certificate, due_date, correction, lin_c0_k, lin_c1, lin_t0_k,
           cvd_r0_ohm, cvd_a, cvd_b, cvd_c, note, created_at FROM reference_old ORDER BY id;
INSERT INTO reference_version (id, reference_id, valid_from, certificate, due_date, correction,
                               lin_c0_k, lin_c1, lin_t0_k, cvd_r0_ohm, cvd_a, cvd_b, cvd_c,
                               why, by_whom, created_at)
    SELECT id, reference_id, valid_from, certificate, due_date, correction, lin_c0_k, lin_c1,
           lin_t0_k, cvd_r0_ohm, cvd_a, cvd_b, cvd_c, why, by_whom, created_at
    FROM reference_version_old ORDER BY id;
DROP TABLE reference_version_old;
DROP TABLE reference_old;
PRAGMA legacy_alter_table = OFF;

CREATE TEMP TABLE migration_check (
    broken INTEGER CONSTRAINT references_intact CHECK (broken = 0)
);
INSERT INTO migration_check SELECT count(*) FROM pragma_foreign_key_check;
DROP TABLE migration_check;

CREATE INDEX reference_version_of ON reference_version(reference_id, id);
CREATE TRIGGER reference_keep BEFORE UPDATE ON reference
    BEGIN SELECT RAISE(ABORT, 'reference thermometers are never edited'); END;
CREATE TRIGGER reference_stay BEFORE DELETE ON reference
    BEGIN SELECT RAISE(ABORT, 'reference thermometers are never deleted'); END;
CREATE TRIGGER reference_version_keep BEFORE UPDATE ON reference_version
    BEGIN SELECT RAISE(ABORT, 'versions are never edited'); END;
CREATE TRIGGER reference_version_stay BEFORE DELETE ON reference_version
    BEGIN SELECT RAISE(ABORT, 'versions are never deleted'); END;
