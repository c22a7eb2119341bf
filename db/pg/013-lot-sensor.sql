-- SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
-- Schema version 13 (as db/013-lot-sensor.sql): a lot carries the kind of sensor it is (NULL:
-- an NTC thermistor lot, every older row, with its own R25, B, pair and tolerances; else
-- 'ptc', 'junction', 'prt' or 'ic', with none of those: they are its part's), and a lot's
-- version holds tolerances exactly when its lot is an NTC lot.  PostgreSQL changes the
-- tables in place: rows, ids, references and triggers stay as they were.
ALTER TABLE lot
    ALTER COLUMN r25_ohm DROP NOT NULL,
    ALTER COLUMN beta_k DROP NOT NULL,
    ALTER COLUMN pair_t1_k DROP NOT NULL,
    ALTER COLUMN pair_t2_k DROP NOT NULL,
    ALTER COLUMN tol_r25 DROP NOT NULL,
    ALTER COLUMN tol_beta DROP NOT NULL,
    ADD COLUMN sensor text CHECK (sensor IS NULL OR sensor IN ('ptc', 'junction', 'prt', 'ic')),
    ADD CONSTRAINT lot_sensor_shape CHECK (
        (sensor IS NULL AND r25_ohm IS NOT NULL AND beta_k IS NOT NULL
         AND pair_t1_k IS NOT NULL AND pair_t2_k IS NOT NULL AND tol_r25 IS NOT NULL
         AND tol_beta IS NOT NULL)
        OR (sensor IS NOT NULL AND r25_ohm IS NULL AND beta_k IS NULL AND pair_t1_k IS NULL
            AND pair_t2_k IS NULL AND tol_r25 IS NULL AND tol_beta IS NULL));
ALTER TABLE lot_version
    ALTER COLUMN tol_r25 DROP NOT NULL,
    ALTER COLUMN tol_beta DROP NOT NULL,
    ADD CONSTRAINT lot_version_shape CHECK ((tol_r25 IS NULL) = (tol_beta IS NULL));
CREATE FUNCTION bandgap_lot_version_shape() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
    IF ((SELECT sensor FROM lot WHERE id = NEW.lot_id) IS NULL) <> (NEW.tol_r25 IS NOT NULL) THEN
        RAISE EXCEPTION 'a lot version''s tolerances and its lot''s sensor kind do not match'
            USING ERRCODE = 'check_violation';
    END IF;
    RETURN NEW;
END $$;
CREATE TRIGGER lot_version_sensor_shape BEFORE INSERT ON lot_version FOR EACH ROW
    EXECUTE FUNCTION bandgap_lot_version_shape();
