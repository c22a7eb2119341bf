-- SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
-- Schema version 11 (as db/011-run-quantity.sql): what a run measured.  run.quantity is NULL
-- for a resistance in ohm, else 'voltage', 'reported_temperature' or 'code', with its unit in
-- run.quantity_unit; a reading's r_ohm holds the reading in the run's quantity, so its > 0
-- check moves to a trigger that applies to resistance runs only.
ALTER TABLE run
    ADD COLUMN quantity text
        CHECK (quantity IS NULL OR quantity IN ('voltage', 'reported_temperature', 'code')),
    ADD COLUMN quantity_unit text
        CHECK ((quantity IS NULL AND quantity_unit IS NULL)
               OR (quantity = 'voltage' AND quantity_unit = 'V')
               OR (quantity = 'reported_temperature' AND quantity_unit = 'degC')
               OR (quantity = 'code' AND quantity_unit = 'LSB'));
ALTER TABLE reading DROP CONSTRAINT reading_r_ohm_check;
CREATE FUNCTION bandgap_resistance_positive() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
    IF NEW.r_ohm <= 0 AND (SELECT quantity FROM run WHERE id = NEW.run_id) IS NULL THEN
        RAISE EXCEPTION 'a resistance must be > 0 ohm' USING ERRCODE = 'check_violation';
    END IF;
    RETURN NEW;
END $$;
CREATE TRIGGER reading_resistance_positive BEFORE INSERT ON reading FOR EACH ROW
    EXECUTE FUNCTION bandgap_resistance_positive();
