-- SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
-- Schema version 13: a lot carries the kind of sensor it is.  lot.sensor is NULL for an NTC
-- thermistor lot (every row before this version), whose nominal R25, B, pair and tolerances
-- are the lot's own as before; else 'ptc', 'junction', 'prt' or 'ic', and then the lot holds
-- none of those (NULL): its nominal values and tolerances are its part's (part_spec, schema
-- 12).  A lot's version (lot_version) holds the tolerances of an NTC lot, or none (NULL) for a
-- lot of another kind, whose version can only change the note.
-- Rows already there keep every value; the new column is NULL, which a record's chain
-- encoding skips, so the chain's hashes stay as they were.
--
-- SQLite cannot drop a NOT NULL or add a CHECK, so 'lot' and 'lot_version' are made again as
-- in 006-finite.sql: renamed with legacy_alter_table on (probe, probe_version and the view
-- keep naming 'lot'), made again with the same columns in the same order and the new one
-- last, the rows copied in id order, the old tables dropped, every reference checked, the
-- index and the append-only triggers made again exactly as before.
PRAGMA legacy_alter_table = ON;
ALTER TABLE lot RENAME TO lot_old;
ALTER TABLE lot_version RENAME TO lot_version_old;

CREATE TABLE lot (
    id          INTEGER PRIMARY KEY,
    code        TEXT NOT NULL UNIQUE CHECK (length(code) BETWEEN 1 AND 200),
    part        TEXT NOT NULL CHECK (length(part) BETWEEN 1 AND 200),
    r25_ohm     REAL CHECK (r25_ohm > 0)
        CONSTRAINT r25_ohm_finite CHECK (r25_ohm <= 1.7976931348623157e308),
    beta_k      REAL CHECK (beta_k > 0)
        CONSTRAINT beta_k_finite CHECK (beta_k <= 1.7976931348623157e308),
    pair_t1_k   REAL CHECK (pair_t1_k > 0)
        CONSTRAINT pair_t1_k_finite CHECK (pair_t1_k <= 1.7976931348623157e308),
    pair_t2_k   REAL CHECK (pair_t2_k > 0 AND pair_t2_k <> pair_t1_k)
        CONSTRAINT pair_t2_k_finite CHECK (pair_t2_k <= 1.7976931348623157e308),
    tol_r25     REAL CHECK (tol_r25 >= 0 AND tol_r25 < 1),
    tol_beta    REAL CHECK (tol_beta >= 0 AND tol_beta < 1),
    note        TEXT,
    created_at  TEXT NOT NULL,
    sensor      TEXT CHECK (sensor IS NULL OR sensor IN ('ptc', 'junction', 'prt', 'ic')),
    -- an NTC lot has all six values, a lot of another kind none
    CONSTRAINT lot_sensor_shape CHECK (
        (sensor IS NULL AND r25_ohm IS NOT NULL AND beta_k IS NOT NULL
         AND pair_t1_k IS NOT NULL AND pair_t2_k IS NOT NULL AND tol_r25 IS NOT NULL
         AND tol_beta IS NOT NULL)
        OR (sensor IS NOT NULL AND r25_ohm IS NULL AND beta_k IS NULL AND pair_t1_k IS NULL
            AND pair_t2_k IS NULL AND tol_r25 IS NULL AND tol_beta IS NULL))
) STRICT;

CREATE TABLE lot_version (
    id          INTEGER PRIMARY KEY,
    lot_id      INTEGER NOT NULL REFERENCES lot(id),
    valid_from  TEXT NOT NULL CHECK (length(valid_from) BETWEEN 10 AND 39),
    tol_r25     REAL CHECK (tol_r25 >= 0 AND tol_r25 < 1),
    tol_beta    REAL CHECK (tol_beta >= 0 AND tol_beta < 1),
    note        TEXT,
    why         TEXT NOT NULL CHECK (length(why) BETWEEN 1 AND 1023),
    by_whom     TEXT NOT NULL CHECK (length(by_whom) BETWEEN 1 AND 200),
    created_at  TEXT NOT NULL,
    CONSTRAINT lot_version_shape CHECK ((tol_r25 IS NULL) = (tol_beta IS NULL))
) STRICT;

INSERT INTO lot (id, code, part, r25_ohm, beta_k, pair_t1_k, pair_t2_k, tol_r25, tol_beta,
                 note, created_at)
    SELECT id, code, part, r25_ohm, beta_k, pair_t1_k, pair_t2_k, tol_r25, tol_beta, note,
           created_at FROM lot_old ORDER BY id;
INSERT INTO lot_version (id, lot_id, valid_from, tol_r25, tol_beta, note, why, by_whom,
                         created_at)
    SELECT id, lot_id, valid_from, tol_r25, tol_beta, note, why, by_whom, created_at
    FROM lot_version_old ORDER BY id;
DROP TABLE lot_version_old;
DROP TABLE lot_old;
PRAGMA legacy_alter_table = OFF;

CREATE TEMP TABLE migration_check (
    broken INTEGER CONSTRAINT references_intact CHECK (broken = 0)
);
INSERT INTO migration_check SELECT count(*) FROM pragma_foreign_key_check;
DROP TABLE migration_check;

CREATE INDEX lot_version_of ON lot_version(lot_id, id);
CREATE TRIGGER lot_keep BEFORE UPDATE ON lot
    BEGIN SELECT RAISE(ABORT, 'lots are never edited'); END;
CREATE TRIGGER lot_stay BEFORE DELETE ON lot
    BEGIN SELECT RAISE(ABORT, 'lots are never deleted'); END;
CREATE TRIGGER lot_version_keep BEFORE UPDATE ON lot_version
    BEGIN SELECT RAISE(ABORT, 'versions are never edited'); END;
CREATE TRIGGER lot_version_stay BEFORE DELETE ON lot_version
    BEGIN SELECT RAISE(ABORT, 'versions are never deleted'); END;
-- a version holds tolerances exactly when its lot is an NTC lot
CREATE TRIGGER lot_version_sensor_shape BEFORE INSERT ON lot_version
    WHEN ((SELECT sensor FROM lot WHERE id = NEW.lot_id) IS NULL) <> (NEW.tol_r25 IS NOT NULL)
    BEGIN SELECT RAISE(ABORT, 'a lot version''s tolerances and its lot''s sensor kind do not match'); END;
