-- SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
-- Schema version 3: what an import records beyond its readings.
-- readings_sha256: SHA-256 (FIPS 180-4) of the readings' canonical form (src/lib/store/
--   store.c, readings_digest), hex; a second import of identical readings of the same probe
--   is refused unless it is a new run on purpose, and then repeats_run names the earlier run.
--   Runs imported before this version have none (NULL) and are not compared.
-- ref_overdue: the reason given for using a reference thermometer past its calibration due
--   date (NULL: it was not past it); every fit and report of the run shows it.
-- The current fit of a probe (the newest fit of its latest run by start time, store.h) needs
-- no new index: run_probe_time (version 2) finds the latest run and fit_run, which holds the
-- fit's id, its newest fit.
ALTER TABLE run ADD COLUMN readings_sha256 TEXT
    CHECK (readings_sha256 IS NULL OR length(readings_sha256) = 64);
ALTER TABLE run ADD COLUMN repeats_run INTEGER REFERENCES run(id);
ALTER TABLE run ADD COLUMN ref_overdue TEXT
    CHECK (ref_overdue IS NULL OR length(ref_overdue) BETWEEN 1 AND 1023);
CREATE INDEX run_probe_digest ON run(probe_id, readings_sha256);
