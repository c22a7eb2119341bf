-- SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
-- Schema version 4: the current (or voltage) a run's probe was measured with, as a number in
-- ampere (or volt), at most one of the two.  Runs imported before keep their free-text
-- 'excitation' as it was typed; new runs leave it NULL.
ALTER TABLE run ADD COLUMN measuring_current_a REAL CHECK (measuring_current_a > 0);
ALTER TABLE run ADD COLUMN measuring_voltage_v REAL
    CHECK (measuring_voltage_v IS NULL
           OR (measuring_voltage_v > 0 AND measuring_current_a IS NULL));
