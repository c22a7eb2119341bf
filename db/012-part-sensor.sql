-- SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
-- Schema version 12: what kind of sensor a part is, and its nominal values in the kind's own
-- quantities.  part_spec.sensor is NULL for an NTC thermistor (every row before this version:
-- the lots' R25 and B stay its nominal values), else 'ptc', 'junction', 'prt' or 'ic';
--   nom_t_k        the temperature the nominal values are at (PTC: of R_ref; junction and IC:
--                  T_r; PRT: 273.15 K, where R0 is)
--   nom_x, tol_x   PTC: R at nom_t_k in ohm and its tolerance as a fraction; junction: V at
--                  T_r in V and its tolerance in V; PRT: R0 in ohm (no tol_x: the class sets
--                  it); IC: the offset c0 of the correction in K and its tolerance in K
--   nom_s, tol_s   PTC: alpha = (1/R) dR/dT at nom_t_k in 1/K and its tolerance as a fraction
--                  of it; junction: dV/dT at T_r in V/K and its tolerance in V/K; IC: the
--                  gain c1 of the correction and its tolerance; PRT: none
--   iec_class      PRT: the IEC 60751 tolerance class ('AA', 'A', 'B', 'C')
-- Rows already there keep every value; the new columns are NULL, which a record's chain
-- encoding skips, so the chain's hashes stay as they were.
ALTER TABLE part_spec ADD COLUMN sensor TEXT
    CHECK (sensor IS NULL OR sensor IN ('ptc', 'junction', 'prt', 'ic'));
ALTER TABLE part_spec ADD COLUMN nom_t_k REAL
    CHECK (nom_t_k IS NULL OR (nom_t_k > 0 AND nom_t_k <= 1.7976931348623157e308));
ALTER TABLE part_spec ADD COLUMN nom_x REAL
    CHECK (nom_x IS NULL OR nom_x BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308);
ALTER TABLE part_spec ADD COLUMN tol_x REAL
    CHECK (tol_x IS NULL OR (tol_x > 0 AND tol_x <= 1.7976931348623157e308));
ALTER TABLE part_spec ADD COLUMN nom_s REAL
    CHECK (nom_s IS NULL OR nom_s BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308);
ALTER TABLE part_spec ADD COLUMN tol_s REAL
    CHECK (tol_s IS NULL OR (tol_s > 0 AND tol_s <= 1.7976931348623157e308));
ALTER TABLE part_spec ADD COLUMN iec_class TEXT
    CHECK (iec_class IS NULL OR iec_class IN ('AA', 'A', 'B', 'C'));
-- the whole row's shape: an NTC row has none of them; a PRT row has R0 > 0 and a class; the
-- others have both values, their tolerances and the temperature
CREATE TRIGGER part_spec_sensor_shape BEFORE INSERT ON part_spec
    WHEN NOT ((NEW.sensor IS NULL AND NEW.nom_t_k IS NULL AND NEW.nom_x IS NULL
               AND NEW.tol_x IS NULL AND NEW.nom_s IS NULL AND NEW.tol_s IS NULL
               AND NEW.iec_class IS NULL)
              OR (NEW.sensor = 'prt' AND NEW.nom_x > 0 AND NEW.iec_class IS NOT NULL
                  AND NEW.nom_t_k IS NOT NULL AND NEW.tol_x IS NULL AND NEW.nom_s IS NULL
                  AND NEW.tol_s IS NULL)
              OR (NEW.sensor IN ('ptc', 'junction', 'ic') AND NEW.nom_t_k IS NOT NULL
                  AND NEW.nom_x IS NOT NULL AND NEW.tol_x IS NOT NULL
                  AND NEW.nom_s IS NOT NULL AND NEW.tol_s IS NOT NULL
                  AND NEW.iec_class IS NULL))
    BEGIN SELECT RAISE(ABORT, 'a part''s sensor kind and its nominal values do not match'); END;
