-- SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
-- Schema version 5 (as db/005-part-nominal.sql): a part's specifications, appended rows.
CREATE TABLE part_spec (
    id          bigint PRIMARY KEY,
    part        text NOT NULL CHECK (length(part) BETWEEN 1 AND 200),
    model       text,
    t0_k        double precision,
    npar        bigint CHECK (npar IS NULL OR npar BETWEEN 2 AND 6),
    c0 double precision, c1 double precision, c2 double precision, c3 double precision,
    c4 double precision, c5 double precision,
    source      text,
    tol_k       double precision CHECK (tol_k IS NULL OR tol_k > 0),
    tol_lo_k    double precision CHECK (tol_lo_k IS NULL OR tol_lo_k > 0),
    tol_hi_k    double precision CHECK (tol_hi_k IS NULL OR tol_hi_k > tol_lo_k),
    baseline    bigint CHECK (baseline IS NULL OR baseline > 0),
    limit_k     double precision CHECK (limit_k IS NULL OR limit_k > 0),
    rate_k      double precision CHECK (rate_k IS NULL OR rate_k > 0),
    note        text,
    created_at  text NOT NULL,
    CHECK ((model IS NULL) = (npar IS NULL) AND (model IS NULL OR (c0 IS NOT NULL
                                                                  AND c1 IS NOT NULL))),
    CHECK ((tol_k IS NULL) = (tol_lo_k IS NULL) AND (tol_k IS NULL) = (tol_hi_k IS NULL))
);
CREATE INDEX part_spec_part ON part_spec(part, created_at, id);
CREATE TRIGGER part_spec_keep BEFORE UPDATE ON part_spec FOR EACH ROW
    EXECUTE FUNCTION bandgap_refuse('part specifications are never edited');
CREATE TRIGGER part_spec_stay BEFORE DELETE ON part_spec FOR EACH ROW
    EXECUTE FUNCTION bandgap_refuse('part specifications are never deleted');
CREATE TRIGGER part_spec_clear BEFORE TRUNCATE ON part_spec FOR EACH STATEMENT
    EXECUTE FUNCTION bandgap_refuse('part specifications are never deleted');
