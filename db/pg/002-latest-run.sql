-- SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
-- Schema version 2 (as db/002-latest-run.sql): the newest run of every probe.
CREATE INDEX run_probe_time ON run(probe_id, started_at, id);
CREATE VIEW probe_latest_run AS
    SELECT p.id AS probe_id, p.lot_id AS lot_id, p.serial AS serial,
           (SELECT r.id FROM run r WHERE r.probe_id = p.id
             ORDER BY r.started_at DESC, r.id DESC LIMIT 1) AS run_id
      FROM probe p;
