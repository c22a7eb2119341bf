-- SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
-- Schema version 3 (as db/003-run-record.sql): the readings' digest, the run a repeat
-- repeats on purpose, the reason for a reference used past its due date.
ALTER TABLE run ADD COLUMN readings_sha256 text
    CHECK (readings_sha256 IS NULL OR length(readings_sha256) = 64);
ALTER TABLE run ADD COLUMN repeats_run bigint REFERENCES run(id);
ALTER TABLE run ADD COLUMN ref_overdue text
    CHECK (ref_overdue IS NULL OR length(ref_overdue) BETWEEN 1 AND 1023);
CREATE INDEX run_probe_digest ON run(probe_id, readings_sha256);
