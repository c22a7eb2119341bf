-- SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
-- Schema version 9 (as db/009-its90-reference.sql): a reference may be a standard platinum
-- resistance thermometer read through ITS-90: R(273.16 K), the sub-range of its certificate
-- and the coefficients of that sub-range's deviation function, on the reference and on its
-- versions.  Existing rows keep every value; the new columns are NULL for them (skipped by
-- the record chain's encoding, so the hashes stay as they were).
ALTER TABLE reference DROP CONSTRAINT reference_correction_check;
ALTER TABLE reference
    ADD CONSTRAINT reference_correction_check
        CHECK (correction IN ('none', 'linear', 'cvd', 'its90')),
    ADD COLUMN its90_rtpw_ohm double precision
        CONSTRAINT its90_rtpw_ohm_finite CHECK (its90_rtpw_ohm IS NULL OR (its90_rtpw_ohm > 0
                                                AND its90_rtpw_ohm <= 1.7976931348623157e308)),
    ADD COLUMN its90_range text CHECK (its90_range IS NULL OR its90_range IN ('Ar-TPW',
        'Hg-TPW', 'Hg-Ga', 'TPW-Ga', 'TPW-In', 'TPW-Sn', 'TPW-Zn', 'TPW-Al', 'TPW-Ag')),
    ADD COLUMN its90_a double precision CONSTRAINT its90_a_finite
        CHECK (its90_a BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    ADD COLUMN its90_b double precision CONSTRAINT its90_b_finite
        CHECK (its90_b BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    ADD COLUMN its90_c double precision CONSTRAINT its90_c_finite
        CHECK (its90_c BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    ADD COLUMN its90_d double precision CONSTRAINT its90_d_finite
        CHECK (its90_d BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    ADD COLUMN its90_w_al double precision
        CONSTRAINT its90_w_al_finite CHECK (its90_w_al IS NULL OR (its90_w_al > 0
                                            AND its90_w_al <= 1.7976931348623157e308)),
    ADD CONSTRAINT reference_its90_complete
        CHECK (correction <> 'its90' OR (its90_rtpw_ohm IS NOT NULL AND its90_range IS NOT NULL
                                         AND its90_a IS NOT NULL));

ALTER TABLE reference_version DROP CONSTRAINT reference_version_correction_check;
ALTER TABLE reference_version
    ADD CONSTRAINT reference_version_correction_check
        CHECK (correction IN ('none', 'linear', 'cvd', 'its90')),
    ADD COLUMN its90_rtpw_ohm double precision
        CONSTRAINT its90_rtpw_ohm_finite CHECK (its90_rtpw_ohm IS NULL OR (its90_rtpw_ohm > 0
                                                AND its90_rtpw_ohm <= 1.7976931348623157e308)),
    ADD COLUMN its90_range text CHECK (its90_range IS NULL OR its90_range IN ('Ar-TPW',
        'Hg-TPW', 'Hg-Ga', 'TPW-Ga', 'TPW-In', 'TPW-Sn', 'TPW-Zn', 'TPW-Al', 'TPW-Ag')),
    ADD COLUMN its90_a double precision CONSTRAINT its90_a_finite
        CHECK (its90_a BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    ADD COLUMN its90_b double precision CONSTRAINT its90_b_finite
        CHECK (its90_b BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    ADD COLUMN its90_c double precision CONSTRAINT its90_c_finite
        CHECK (its90_c BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    ADD COLUMN its90_d double precision CONSTRAINT its90_d_finite
        CHECK (its90_d BETWEEN -1.7976931348623157e308 AND 1.7976931348623157e308),
    ADD COLUMN its90_w_al double precision
        CONSTRAINT its90_w_al_finite CHECK (its90_w_al IS NULL OR (its90_w_al > 0
                                            AND its90_w_al <= 1.7976931348623157e308)),
    ADD CONSTRAINT reference_version_its90_complete
        CHECK (correction <> 'its90' OR (its90_rtpw_ohm IS NOT NULL AND its90_range IS NOT NULL
                                         AND its90_a IS NOT NULL));
