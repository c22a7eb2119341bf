-- SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
-- Schema version 7 (as db/007-record-chain.sql): the record chain (each appended record
-- chained to the one before it by SHA-256, the encoding in src/lib/store/chain.c, the same
-- on both backends), and lots, probes and reference thermometers refuse changes and deletes.
CREATE TABLE chain (
    seq     bigint PRIMARY KEY,
    kind    text NOT NULL CHECK (kind IN ('lot', 'probe', 'reference', 'part_spec', 'run',
                                          'exclusion', 'fit', 'artifact')),
    row_id  bigint NOT NULL,
    hash    text NOT NULL CHECK (length(hash) = 64),
    UNIQUE (kind, row_id)
);
CREATE TRIGGER chain_keep BEFORE UPDATE ON chain FOR EACH ROW
    EXECUTE FUNCTION bandgap_refuse('the record chain is never edited');
CREATE TRIGGER chain_stay BEFORE DELETE ON chain FOR EACH ROW
    EXECUTE FUNCTION bandgap_refuse('the record chain is never deleted');
CREATE TRIGGER chain_clear BEFORE TRUNCATE ON chain FOR EACH STATEMENT
    EXECUTE FUNCTION bandgap_refuse('the record chain is never deleted');
CREATE TRIGGER lot_keep BEFORE UPDATE ON lot FOR EACH ROW
    EXECUTE FUNCTION bandgap_refuse('lots are never edited');
CREATE TRIGGER lot_stay BEFORE DELETE ON lot FOR EACH ROW
    EXECUTE FUNCTION bandgap_refuse('lots are never deleted');
CREATE TRIGGER lot_clear BEFORE TRUNCATE ON lot FOR EACH STATEMENT
    EXECUTE FUNCTION bandgap_refuse('lots are never deleted');
CREATE TRIGGER probe_keep BEFORE UPDATE ON probe FOR EACH ROW
    EXECUTE FUNCTION bandgap_refuse('probes are never edited');
CREATE TRIGGER probe_stay BEFORE DELETE ON probe FOR EACH ROW
    EXECUTE FUNCTION bandgap_refuse('probes are never deleted');
CREATE TRIGGER probe_clear BEFORE TRUNCATE ON probe FOR EACH STATEMENT
    EXECUTE FUNCTION bandgap_refuse('probes are never deleted');
CREATE TRIGGER reference_keep BEFORE UPDATE ON reference FOR EACH ROW
    EXECUTE FUNCTION bandgap_refuse('reference thermometers are never edited');
CREATE TRIGGER reference_stay BEFORE DELETE ON reference FOR EACH ROW
    EXECUTE FUNCTION bandgap_refuse('reference thermometers are never deleted');
CREATE TRIGGER reference_clear BEFORE TRUNCATE ON reference FOR EACH STATEMENT
    EXECUTE FUNCTION bandgap_refuse('reference thermometers are never deleted');
