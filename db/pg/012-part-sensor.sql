-- SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
-- Schema version 12 (as db/012-part-sensor.sql): what kind of sensor a part is (NULL: an NTC
-- thermistor, every older row) and its nominal values in the kind's own quantities.
ALTER TABLE part_spec
    ADD COLUMN sensor text CHECK (sensor IS NULL OR sensor IN ('ptc', 'junction', 'prt', 'ic')),
    ADD COLUMN nom_t_k double precision CHECK (nom_t_k IS NULL OR (nom_t_k > 0
                                                                   AND nom_t_k <> 'Infinity')),
    ADD COLUMN nom_x double precision CHECK (nom_x IS NULL OR (nom_x <> 'Infinity'
                                                               AND nom_x <> '-Infinity'
                                                               AND nom_x <> 'NaN')),
    ADD COLUMN tol_x double precision CHECK (tol_x IS NULL OR (tol_x > 0
                                                               AND tol_x <> 'Infinity'
                                                               AND tol_x <> 'NaN')),
    ADD COLUMN nom_s double precision CHECK (nom_s IS NULL OR (nom_s <> 'Infinity'
                                                               AND nom_s <> '-Infinity'
                                                               AND nom_s <> 'NaN')),
    ADD COLUMN tol_s double precision CHECK (tol_s IS NULL OR (tol_s > 0
                                                               AND tol_s <> 'Infinity'
                                                               AND tol_s <> 'NaN')),
    ADD COLUMN iec_class text CHECK (iec_class IS NULL OR iec_class IN ('AA', 'A', 'B', 'C')),
    ADD CONSTRAINT part_spec_sensor_shape CHECK (
        (sensor IS NULL AND nom_t_k IS NULL AND nom_x IS NULL AND tol_x IS NULL
         AND nom_s IS NULL AND tol_s IS NULL AND iec_class IS NULL)
        OR (sensor = 'prt' AND nom_x > 0 AND iec_class IS NOT NULL AND nom_t_k IS NOT NULL
            AND tol_x IS NULL AND nom_s IS NULL AND tol_s IS NULL)
        OR (sensor IN ('ptc', 'junction', 'ic') AND nom_t_k IS NOT NULL AND nom_x IS NOT NULL
            AND tol_x IS NOT NULL AND nom_s IS NOT NULL AND tol_s IS NOT NULL
            AND iec_class IS NULL));
