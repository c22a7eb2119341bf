# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
# A small standard database for the CLI cases (invented lot, probes and reference).
"$BANDGAP" --db cal.db init
"$BANDGAP" --db cal.db lot add L-2611 --part NTC-10K-3950 --r25 10k --beta 3950K --pair 25/85 \
    --tol-r25 1% --tol-beta 1%
"$BANDGAP" --db cal.db probe add P-001 --lot L-2611
"$BANDGAP" --db cal.db probe add "'; DROP TABLE probe; --" --lot L-2611
"$BANDGAP" --db cal.db ref add SPRT-7 --cert "CERT 26/0042" --due 2027-06-30 \
    --linear -0.1712K,0.00218,20C
cp "$CLI_DIR/lib/bath.csv" bath.csv
"$BANDGAP" --db cal.db import bath.csv --probe P-001 --ref SPRT-7 --operator "A. Tester" \
    --medium "stirred oil" --at 2026-11-20T09:00:00Z
