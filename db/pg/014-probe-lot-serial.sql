-- SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
-- Schema version 14 (as db/014-probe-lot-serial.sql): the probes of a lot are indexed by
-- serial, so a lot-wide read walks them in serial order; the index replaces probe_lot, whose
-- lookups by lot it also serves.  No row changes.
CREATE INDEX probe_lot_serial ON probe(lot_id, serial);
DROP INDEX probe_lot;
