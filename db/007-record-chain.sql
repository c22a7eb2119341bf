-- SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
-- Schema version 7: the record defends itself.
-- 1. Every appended record (a lot, a probe, a reference thermometer, a part's specification,
--    a run with its readings, an exclusion, a fit, an issued report) is chained to the one
--    before it: 'hash' is the SHA-256 of the previous record's hash and a canonical encoding
--    of this record's content (src/lib/store/sqlite_chain.c says which).  'bandgap verify'
--    recomputes the chain and names the first record that does not match; each issued report
--    prints the head of the chain it was issued on.  The rows of a database made before this
--    version are chained when it is upgraded, table by table in id order.
-- 2. Lots, probes and reference thermometers refuse changes and deletes, like the history
--    tables: a fact that a verdict depends on is never edited in place.
CREATE TABLE chain (
    seq     INTEGER PRIMARY KEY,
    kind    TEXT NOT NULL CHECK (kind IN ('lot', 'probe', 'reference', 'part_spec', 'run',
                                          'exclusion', 'fit', 'artifact')),
    row_id  INTEGER NOT NULL,
    hash    TEXT NOT NULL CHECK (length(hash) = 64),
    UNIQUE (kind, row_id)
) STRICT;
CREATE TRIGGER chain_keep BEFORE UPDATE ON chain
    BEGIN SELECT RAISE(ABORT, 'the record chain is never edited'); END;
CREATE TRIGGER chain_stay BEFORE DELETE ON chain
    BEGIN SELECT RAISE(ABORT, 'the record chain is never deleted'); END;
CREATE TRIGGER lot_keep BEFORE UPDATE ON lot
    BEGIN SELECT RAISE(ABORT, 'lots are never edited'); END;
CREATE TRIGGER lot_stay BEFORE DELETE ON lot
    BEGIN SELECT RAISE(ABORT, 'lots are never deleted'); END;
CREATE TRIGGER probe_keep BEFORE UPDATE ON probe
    BEGIN SELECT RAISE(ABORT, 'probes are never edited'); END;
CREATE TRIGGER probe_stay BEFORE DELETE ON probe
    BEGIN SELECT RAISE(ABORT, 'probes are never deleted'); END;
CREATE TRIGGER reference_keep BEFORE UPDATE ON reference
    BEGIN SELECT RAISE(ABORT, 'reference thermometers are never edited'); END;
CREATE TRIGGER reference_stay BEFORE DELETE ON reference
    BEGIN SELECT RAISE(ABORT, 'reference thermometers are never deleted'); END;
