# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
# Sourced by tests/pg/faults.sh and tests/pg/bench.sh: biglot DATABASE_URI PSQL_DB N K [L]
# makes, on the server, a bandgap database holding lot BIG of N probes (with L > 1: lots Q1 ..
# QL of N/L probes each, the same probes and readings), each with one run
# of K readings of an INVENTED beta curve (R25 10 kohm, B 3950 K, 250 K to 350 K, scatter of
# about 1e-4 in R).  The lot goes in through bandgap; the probes, runs and readings are written
# by SQL in three statements (thousands of probes in seconds; the record chain does not cover
# them, which a fit does not need), so only the step under test goes through bandgap.
# Needs BIN and PSQL; $2 is what psql connects to (a database name, or a URI).
biglot() {
    nl=${5:-1}
    "$BIN" --db "$1" init > /dev/null || return 1
    l=1
    while [ $l -le "$nl" ]; do
        code=BIG
        [ "$nl" -gt 1 ] && code=Q$l
        "$BIN" --db "$1" lot add $code --part NTC-INV --r25 10k --beta 3950K --tol-r25 1% \
            --tol-beta 1% > /dev/null || return 1
        l=$((l + 1))
    done
    $PSQL -d "$2" <<SQL
INSERT INTO probe(id, serial, lot_id, created_at)
    SELECT g, 'B-' || lpad(g::text, 6, '0'), (g - 1) / (($3 + $nl - 1) / $nl) + 1,
           '2025-12-01T00:00:00Z'
      FROM generate_series(1, $3) g;
INSERT INTO run(id, probe_id, started_at, source, t_raw_unit, first_reading, nreadings,
                imported_at)
    SELECT g, g, '2026-11-20T09:00:00Z', 'invented.csv', 'K', (g - 1) * $4 + 1, $4,
           '2025-12-01T00:00:00Z'
      FROM generate_series(1, $3) g;
INSERT INTO reading(id, run_id, line, t_raw, t_k, r_ohm, u_t_k, u_r_ohm)
    SELECT (g - 1) * $4 + j, g, j + 1, t, t,
           10000 * exp(3950 * (1 / t - 1 / 298.15)) * (1 + 1e-4 * sin(g * 7 + j * 3)), 0.002, 0
      FROM generate_series(1, $3) g, generate_series(1, $4) j,
           LATERAL (SELECT 250 + 100.0 * (j - 1) / ($4 - 1) AS t) x;
ANALYZE probe; ANALYZE run; ANALYZE reading;
SQL
}
