-- SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
-- Schema version 4 (as db/004-measuring-current.sql): the measuring current or voltage.
ALTER TABLE run ADD COLUMN measuring_current_a double precision CHECK (measuring_current_a > 0);
ALTER TABLE run ADD COLUMN measuring_voltage_v double precision
    CHECK (measuring_voltage_v IS NULL
           OR (measuring_voltage_v > 0 AND measuring_current_a IS NULL));
