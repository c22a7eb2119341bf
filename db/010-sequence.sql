-- SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
-- Calibration sequences driven by bandgap (bandgap sequence run): each reading is a row of
-- 'sequence_reading', committed as it is taken, with its time, setpoint, channel and the
-- instruments' raw replies; each setpoint's settling (accepted, or its time limit passed) is a
-- row of 'sequence_settle' with the drift and scatter at that moment; 'sequence' keeps the
-- file as read, its SHA-256, the instruments' *IDN? replies and the stability criterion.  A
-- sequence is finished when its 'sequence_end' row exists: written in the transaction that
-- makes one run per probe from its readings (those runs are chained as imports are).  Only
-- new tables: every older database reads as before.  Rows are never edited or deleted.
CREATE TABLE sequence (
    id           INTEGER PRIMARY KEY,
    file         TEXT NOT NULL,
    file_sha256  TEXT NOT NULL CHECK (length(file_sha256) = 64),
    file_text    TEXT NOT NULL,
    idn          TEXT NOT NULL,
    criterion    TEXT NOT NULL,
    reference_id INTEGER NOT NULL REFERENCES reference(id),
    started_at   TEXT NOT NULL
) STRICT;

CREATE TABLE sequence_settle (
    id           INTEGER PRIMARY KEY,
    sequence_id  INTEGER NOT NULL REFERENCES sequence(id),
    setpoint     INTEGER NOT NULL CHECK (setpoint >= 0),
    setpoint_k   REAL NOT NULL CONSTRAINT setpoint_k_finite
                 CHECK (setpoint_k BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    settled      INTEGER NOT NULL CHECK (settled IN (0, 1)),
    slope_k_s    REAL CONSTRAINT slope_k_s_finite
                 CHECK (slope_k_s BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    scatter_k    REAL CONSTRAINT scatter_k_finite
                 CHECK (scatter_k BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    mean_k       REAL CONSTRAINT mean_k_finite
                 CHECK (mean_k BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    window_s     REAL NOT NULL CONSTRAINT window_s_finite
                 CHECK (window_s BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    waited_s     REAL NOT NULL CONSTRAINT waited_s_finite
                 CHECK (waited_s BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    samples      INTEGER NOT NULL,
    at           TEXT NOT NULL
) STRICT;

CREATE TABLE sequence_reading (
    id           INTEGER PRIMARY KEY,
    sequence_id  INTEGER NOT NULL REFERENCES sequence(id),
    setpoint     INTEGER NOT NULL CHECK (setpoint >= 0),
    probe        INTEGER NOT NULL CHECK (probe >= 0),
    k            INTEGER NOT NULL CHECK (k >= 1),
    channel      TEXT NOT NULL,
    setpoint_k   REAL NOT NULL CONSTRAINT setpoint_k_finite
                 CHECK (setpoint_k BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    r_ohm        REAL NOT NULL CONSTRAINT r_ohm_finite
                 CHECK (r_ohm BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    ref_raw      REAL NOT NULL CONSTRAINT ref_raw_finite
                 CHECK (ref_raw BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    time         TEXT NOT NULL,
    meter_reply  TEXT NOT NULL,
    ref_reply    TEXT NOT NULL,
    UNIQUE (sequence_id, setpoint, probe, k)
) STRICT;

CREATE TABLE sequence_end (
    sequence_id  INTEGER PRIMARY KEY REFERENCES sequence(id),
    finished_at  TEXT NOT NULL,
    first_run    INTEGER NOT NULL REFERENCES run(id),
    last_run     INTEGER NOT NULL REFERENCES run(id)
) STRICT;

CREATE TRIGGER sequence_keep BEFORE UPDATE ON sequence
    BEGIN SELECT RAISE(ABORT, 'sequences are never edited'); END;
CREATE TRIGGER sequence_stay BEFORE DELETE ON sequence
    BEGIN SELECT RAISE(ABORT, 'sequences are never deleted'); END;
CREATE TRIGGER sequence_settle_keep BEFORE UPDATE ON sequence_settle
    BEGIN SELECT RAISE(ABORT, 'settling records are never edited'); END;
CREATE TRIGGER sequence_settle_stay BEFORE DELETE ON sequence_settle
    BEGIN SELECT RAISE(ABORT, 'settling records are never deleted'); END;
CREATE TRIGGER sequence_reading_keep BEFORE UPDATE ON sequence_reading
    BEGIN SELECT RAISE(ABORT, 'readings are never edited'); END;
CREATE TRIGGER sequence_reading_stay BEFORE DELETE ON sequence_reading
    BEGIN SELECT RAISE(ABORT, 'readings are never deleted'); END;
CREATE TRIGGER sequence_end_keep BEFORE UPDATE ON sequence_end
    BEGIN SELECT RAISE(ABORT, 'a finished sequence is never edited'); END;
CREATE TRIGGER sequence_end_stay BEFORE DELETE ON sequence_end
    BEGIN SELECT RAISE(ABORT, 'a finished sequence is never deleted'); END;
