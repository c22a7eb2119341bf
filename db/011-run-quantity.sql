-- SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
-- Schema version 11: what a run measured.  run.quantity is NULL for a resistance in ohm (every
-- run before this version, and every resistance run after it), 'voltage' (a junction's
-- voltage in V, at the excitation current in measuring_current_a when the file states one),
-- 'reported_temperature' (the temperature an IC sensor reports, in degC) or 'code' (an IC
-- sensor's output code, in its LSB); run.quantity_unit is that quantity's unit (NULL with a
-- resistance).  A reading's r_ohm and u_r_ohm hold the reading and its standard uncertainty in
-- the run's quantity and unit (the names stay, so that every query and every record's chain
-- encoding stay as they were).  A reported temperature or a code may be zero or negative, so
-- 'reading' is made again without the r_ohm > 0 check (a resistance must still be > 0: the
-- trigger reading_resistance_positive refuses the others for a run whose quantity is NULL).
-- Rows already there keep every value; the new run columns are NULL, which a record's chain
-- encoding skips, so the chain's hashes stay as they were.
ALTER TABLE run ADD COLUMN quantity TEXT
    CHECK (quantity IS NULL OR quantity IN ('voltage', 'reported_temperature', 'code'));
ALTER TABLE run ADD COLUMN quantity_unit TEXT
    CHECK ((quantity IS NULL AND quantity_unit IS NULL)
           OR (quantity = 'voltage' AND quantity_unit = 'V')
           OR (quantity = 'reported_temperature' AND quantity_unit = 'degC')
           OR (quantity = 'code' AND quantity_unit = 'LSB'));

-- as in 006-finite.sql: renamed with legacy_alter_table on (the exclusions keep naming
-- 'reading'), made again, the rows copied in id order, the old table dropped, every
-- reference checked, the triggers made again as before
PRAGMA legacy_alter_table = ON;
ALTER TABLE reading RENAME TO reading_old;
CREATE TABLE reading (
    id          INTEGER PRIMARY KEY,
    run_id      INTEGER NOT NULL REFERENCES run(id),
    line        INTEGER NOT NULL CHECK (line > 0),
    t_raw       REAL NOT NULL CONSTRAINT t_raw_finite
        CHECK (t_raw BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    t_k         REAL NOT NULL CHECK (t_k > 0)
        CONSTRAINT t_k_finite CHECK (t_k <= 1.7976931348623157e308),
    r_ohm       REAL NOT NULL CONSTRAINT r_ohm_finite
        CHECK (r_ohm BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    u_t_k       REAL NOT NULL CHECK (u_t_k >= 0)
        CONSTRAINT u_t_k_finite CHECK (u_t_k <= 1.7976931348623157e308),
    u_r_ohm     REAL NOT NULL CHECK (u_r_ohm >= 0)
        CONSTRAINT u_r_ohm_finite CHECK (u_r_ohm <= 1.7976931348623157e308),
    time        TEXT,
    note        TEXT
) STRICT;
INSERT INTO reading SELECT * FROM reading_old ORDER BY id;
DROP TABLE reading_old;
PRAGMA legacy_alter_table = OFF;

CREATE TEMP TABLE migration_check (
    broken INTEGER CONSTRAINT references_intact CHECK (broken = 0)
);
INSERT INTO migration_check SELECT count(*) FROM pragma_foreign_key_check;
DROP TABLE migration_check;

CREATE TRIGGER reading_keep BEFORE UPDATE ON reading
    BEGIN SELECT RAISE(ABORT, 'readings are never edited'); END;
CREATE TRIGGER reading_stay BEFORE DELETE ON reading
    BEGIN SELECT RAISE(ABORT, 'readings are never deleted'); END;
CREATE TRIGGER reading_resistance_positive BEFORE INSERT ON reading
    WHEN NEW.r_ohm <= 0 AND (SELECT quantity FROM run WHERE id = NEW.run_id) IS NULL
    BEGIN SELECT RAISE(ABORT, 'a resistance must be > 0 ohm'); END;
