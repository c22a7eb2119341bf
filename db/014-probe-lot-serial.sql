-- SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
-- Schema version 14: the probes of a lot are indexed by serial.  Every lot-wide read (the lot
-- report, drift --lot, export --lot) takes a lot's probes in serial order; with the index it
-- walks them in that order instead of sorting every run and fit row of the lot, which at a
-- hundred thousand probes was a sort of some 300,000 wide rows.  The new index starts with
-- lot_id, so it also serves every lookup the old probe_lot index served, which is dropped.
-- No row changes, so the record chain's hashes stay as they were.
CREATE INDEX probe_lot_serial ON probe(lot_id, serial);
DROP INDEX probe_lot;
