-- SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
-- Schema version 5: what a part number specifies, kept with the part (lots name their part
-- as text).  Each 'bandgap part set' appends a whole row; the newest row of a part is its
-- specification, and the older rows stay (a changed nominal curve is a new row with its
-- time; reports issued before keep the curve they show).
--   model, t0_k, npar, c0..c5: the nominal curve as a model of the model table (NULL: none,
--     the lots' R25 and B are the nominal curve); source says where it came from;
--   tol_k over tol_lo_k .. tol_hi_k: an interchangeability tolerance in kelvin;
--   baseline, limit_k, rate_k: the QA defaults of the part's lots (NULL: none).
CREATE TABLE part_spec (
    id          INTEGER PRIMARY KEY,
    part        TEXT NOT NULL CHECK (length(part) BETWEEN 1 AND 200),
    model       TEXT,
    t0_k        REAL,
    npar        INTEGER CHECK (npar IS NULL OR npar BETWEEN 2 AND 6),
    c0 REAL, c1 REAL, c2 REAL, c3 REAL, c4 REAL, c5 REAL,
    source      TEXT,
    tol_k       REAL CHECK (tol_k IS NULL OR tol_k > 0),
    tol_lo_k    REAL CHECK (tol_lo_k IS NULL OR tol_lo_k > 0),
    tol_hi_k    REAL CHECK (tol_hi_k IS NULL OR tol_hi_k > tol_lo_k),
    baseline    INTEGER CHECK (baseline IS NULL OR baseline > 0),
    limit_k     REAL CHECK (limit_k IS NULL OR limit_k > 0),
    rate_k      REAL CHECK (rate_k IS NULL OR rate_k > 0),
    note        TEXT,
    created_at  TEXT NOT NULL,
    CHECK ((model IS NULL) = (npar IS NULL) AND (model IS NULL OR (c0 IS NOT NULL
                                                                  AND c1 IS NOT NULL))),
    CHECK ((tol_k IS NULL) = (tol_lo_k IS NULL) AND (tol_k IS NULL) = (tol_hi_k IS NULL))
) STRICT;
CREATE INDEX part_spec_part ON part_spec(part, created_at, id);

CREATE TRIGGER part_spec_keep BEFORE UPDATE ON part_spec
    BEGIN SELECT RAISE(ABORT, 'part specifications are never edited'); END;
CREATE TRIGGER part_spec_stay BEFORE DELETE ON part_spec
    BEGIN SELECT RAISE(ABORT, 'part specifications are never deleted'); END;
