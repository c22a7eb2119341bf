-- SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
-- Schema version 10 (as db/010-sequence.sql): the tables of calibration sequences (ids are the
-- largest plus one, given under the writers' lock, as on SQLite).
CREATE TABLE sequence (
    id           bigint PRIMARY KEY,
    file         text NOT NULL,
    file_sha256  text NOT NULL CHECK (length(file_sha256) = 64),
    file_text    text NOT NULL,
    idn          text NOT NULL,
    criterion    text NOT NULL,
    reference_id bigint NOT NULL REFERENCES reference(id),
    started_at   text NOT NULL
);

CREATE TABLE sequence_settle (
    id           bigint PRIMARY KEY,
    sequence_id  bigint NOT NULL REFERENCES sequence(id),
    setpoint     bigint NOT NULL CHECK (setpoint >= 0),
    setpoint_k   double precision NOT NULL CONSTRAINT setpoint_k_finite
                 CHECK (setpoint_k BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    settled      bigint NOT NULL CHECK (settled IN (0, 1)),
    slope_k_s    double precision CONSTRAINT slope_k_s_finite
                 CHECK (slope_k_s BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    scatter_k    double precision CONSTRAINT scatter_k_finite
                 CHECK (scatter_k BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    mean_k       double precision CONSTRAINT mean_k_finite
                 CHECK (mean_k BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    window_s     double precision NOT NULL CONSTRAINT window_s_finite
                 CHECK (window_s BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    waited_s     double precision NOT NULL CONSTRAINT waited_s_finite
                 CHECK (waited_s BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    samples      bigint NOT NULL,
    at           text NOT NULL
);

CREATE TABLE sequence_reading (
    id           bigint PRIMARY KEY,
    sequence_id  bigint NOT NULL REFERENCES sequence(id),
    setpoint     bigint NOT NULL CHECK (setpoint >= 0),
    probe        bigint NOT NULL CHECK (probe >= 0),
    k            bigint NOT NULL CHECK (k >= 1),
    channel      text NOT NULL,
    setpoint_k   double precision NOT NULL CONSTRAINT setpoint_k_finite
                 CHECK (setpoint_k BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    r_ohm        double precision NOT NULL CONSTRAINT r_ohm_finite
                 CHECK (r_ohm BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    ref_raw      double precision NOT NULL CONSTRAINT ref_raw_finite
                 CHECK (ref_raw BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    time         text NOT NULL,
    meter_reply  text NOT NULL,
    ref_reply    text NOT NULL,
    UNIQUE (sequence_id, setpoint, probe, k)
);

CREATE TABLE sequence_end (
    sequence_id  bigint PRIMARY KEY REFERENCES sequence(id),
    finished_at  text NOT NULL,
    first_run    bigint NOT NULL REFERENCES run(id),
    last_run     bigint NOT NULL REFERENCES run(id)
);

CREATE TRIGGER sequence_keep BEFORE UPDATE ON sequence FOR EACH ROW
    EXECUTE FUNCTION bandgap_refuse('sequences are never edited');
CREATE TRIGGER sequence_stay BEFORE DELETE ON sequence FOR EACH ROW
    EXECUTE FUNCTION bandgap_refuse('sequences are never deleted');
CREATE TRIGGER sequence_clear BEFORE TRUNCATE ON sequence FOR EACH STATEMENT
    EXECUTE FUNCTION bandgap_refuse('sequences are never deleted');
CREATE TRIGGER sequence_settle_keep BEFORE UPDATE ON sequence_settle FOR EACH ROW
    EXECUTE FUNCTION bandgap_refuse('settling records are never edited');
CREATE TRIGGER sequence_settle_stay BEFORE DELETE ON sequence_settle FOR EACH ROW
    EXECUTE FUNCTION bandgap_refuse('settling records are never deleted');
CREATE TRIGGER sequence_settle_clear BEFORE TRUNCATE ON sequence_settle FOR EACH STATEMENT
    EXECUTE FUNCTION bandgap_refuse('settling records are never deleted');
CREATE TRIGGER sequence_reading_keep BEFORE UPDATE ON sequence_reading FOR EACH ROW
    EXECUTE FUNCTION bandgap_refuse('readings are never edited');
CREATE TRIGGER sequence_reading_stay BEFORE DELETE ON sequence_reading FOR EACH ROW
    EXECUTE FUNCTION bandgap_refuse('readings are never deleted');
CREATE TRIGGER sequence_reading_clear BEFORE TRUNCATE ON sequence_reading FOR EACH STATEMENT
    EXECUTE FUNCTION bandgap_refuse('readings are never deleted');
CREATE TRIGGER sequence_end_keep BEFORE UPDATE ON sequence_end FOR EACH ROW
    EXECUTE FUNCTION bandgap_refuse('a finished sequence is never edited');
CREATE TRIGGER sequence_end_stay BEFORE DELETE ON sequence_end FOR EACH ROW
    EXECUTE FUNCTION bandgap_refuse('a finished sequence is never deleted');
CREATE TRIGGER sequence_end_clear BEFORE TRUNCATE ON sequence_end FOR EACH STATEMENT
    EXECUTE FUNCTION bandgap_refuse('a finished sequence is never deleted');
