-- SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
-- Schema version 8: versions of the facts a verdict depends on.
-- A reference thermometer is recalibrated, a lot's tolerances are corrected, a probe is moved
-- to another lot: each change is a new version row, never an edit.  The first version of each
-- is the row itself (reference, lot, probe); a version holds what it changes, from when it is
-- valid ('valid_from', never before the record was created, never before the version before
-- it), who recorded it, when and why.  A verdict uses the version in force at the time of the
-- calibration it judges (the run's start): the newest version valid from at or before that
-- time, else the row itself.  A run records the reference version it was corrected with
-- (NULL: the reference's own row).
CREATE TABLE reference_version (
    id           INTEGER PRIMARY KEY,
    reference_id INTEGER NOT NULL REFERENCES reference(id),
    valid_from   TEXT NOT NULL CHECK (length(valid_from) BETWEEN 10 AND 39),
    certificate  TEXT NOT NULL CHECK (length(certificate) BETWEEN 1 AND 200),
    due_date     TEXT,
    correction   TEXT NOT NULL CHECK (correction IN ('none', 'linear', 'cvd')),
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
    CHECK (correction <> 'linear' OR (lin_c0_k IS NOT NULL AND lin_c1 IS NOT NULL
                                      AND lin_t0_k IS NOT NULL)),
    CHECK (correction <> 'cvd' OR (cvd_r0_ohm IS NOT NULL AND cvd_a IS NOT NULL
                                   AND cvd_b IS NOT NULL AND cvd_c IS NOT NULL))
) STRICT;
CREATE INDEX reference_version_of ON reference_version(reference_id, id);

CREATE TABLE lot_version (
    id          INTEGER PRIMARY KEY,
    lot_id      INTEGER NOT NULL REFERENCES lot(id),
    valid_from  TEXT NOT NULL CHECK (length(valid_from) BETWEEN 10 AND 39),
    tol_r25     REAL NOT NULL CHECK (tol_r25 >= 0 AND tol_r25 < 1),
    tol_beta    REAL NOT NULL CHECK (tol_beta >= 0 AND tol_beta < 1),
    note        TEXT,
    why         TEXT NOT NULL CHECK (length(why) BETWEEN 1 AND 1023),
    by_whom     TEXT NOT NULL CHECK (length(by_whom) BETWEEN 1 AND 200),
    created_at  TEXT NOT NULL
) STRICT;
CREATE INDEX lot_version_of ON lot_version(lot_id, id);

CREATE TABLE probe_version (
    id          INTEGER PRIMARY KEY,
    probe_id    INTEGER NOT NULL REFERENCES probe(id),
    valid_from  TEXT NOT NULL CHECK (length(valid_from) BETWEEN 10 AND 39),
    lot_id      INTEGER NOT NULL REFERENCES lot(id),
    why         TEXT NOT NULL CHECK (length(why) BETWEEN 1 AND 1023),
    by_whom     TEXT NOT NULL CHECK (length(by_whom) BETWEEN 1 AND 200),
    created_at  TEXT NOT NULL
) STRICT;
CREATE INDEX probe_version_of ON probe_version(probe_id, id);
CREATE INDEX probe_version_lot ON probe_version(lot_id);

CREATE TRIGGER reference_version_keep BEFORE UPDATE ON reference_version
    BEGIN SELECT RAISE(ABORT, 'versions are never edited'); END;
CREATE TRIGGER reference_version_stay BEFORE DELETE ON reference_version
    BEGIN SELECT RAISE(ABORT, 'versions are never deleted'); END;
CREATE TRIGGER lot_version_keep BEFORE UPDATE ON lot_version
    BEGIN SELECT RAISE(ABORT, 'versions are never edited'); END;
CREATE TRIGGER lot_version_stay BEFORE DELETE ON lot_version
    BEGIN SELECT RAISE(ABORT, 'versions are never deleted'); END;
CREATE TRIGGER probe_version_keep BEFORE UPDATE ON probe_version
    BEGIN SELECT RAISE(ABORT, 'versions are never edited'); END;
CREATE TRIGGER probe_version_stay BEFORE DELETE ON probe_version
    BEGIN SELECT RAISE(ABORT, 'versions are never deleted'); END;

-- The reference version a run's readings were corrected with (NULL: the reference's own row,
-- and every run imported before this version).  A NULL column is not in a record's chain
-- encoding, so the runs already chained keep their hashes.
ALTER TABLE run ADD COLUMN reference_version_id INTEGER REFERENCES reference_version(id);

-- The chain's kinds widen to the version tables.  SQLite cannot change a CHECK, so the chain
-- table is made again with the same rows and triggers (in this migration's one transaction;
-- dropping a table fires no delete trigger).
CREATE TABLE chain_new (
    seq     INTEGER PRIMARY KEY,
    kind    TEXT NOT NULL CHECK (kind IN ('lot', 'probe', 'reference', 'part_spec', 'run',
                                          'exclusion', 'fit', 'artifact', 'reference_version',
                                          'lot_version', 'probe_version')),
    row_id  INTEGER NOT NULL,
    hash    TEXT NOT NULL CHECK (length(hash) = 64),
    UNIQUE (kind, row_id)
) STRICT;
INSERT INTO chain_new (seq, kind, row_id, hash) SELECT seq, kind, row_id, hash FROM chain
    ORDER BY seq;
DROP TABLE chain;
ALTER TABLE chain_new RENAME TO chain;
CREATE TRIGGER chain_keep BEFORE UPDATE ON chain
    BEGIN SELECT RAISE(ABORT, 'the record chain is never edited'); END;
CREATE TRIGGER chain_stay BEFORE DELETE ON chain
    BEGIN SELECT RAISE(ABORT, 'the record chain is never deleted'); END;
