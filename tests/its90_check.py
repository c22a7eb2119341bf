#!/usr/bin/env python3
# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
# A standard platinum reference read through ITS-90, end to end: an invented thermometer on
# each sub-range is added with `ref add --its90`, readings in ohm are imported with it, and
# the corrected temperatures the database holds are compared with the 40-digit mpmath values
# of tests/ref/its90-values.txt (tests/ref/its90_values.py: H. Preston-Thomas, Metrologia 27
# (1990) 3-10, reference function, Table 4 constants, deviation functions of section 3.3).
# Also: a reading outside the thermometer's sub-range is refused with the file, line and field
# and the database is left as it was; the versions of such a reference keep its values.
# Usage: its90_check.py BANDGAP WORKDIR     prints "ok NAME" / "not ok NAME" lines
import json
import os
import subprocess
import sys

B, W = os.path.abspath(sys.argv[1]), sys.argv[2]
HERE = os.path.dirname(os.path.abspath(__file__))
DB = os.path.join(W, 'its90.db')
RTPW = 25.5  # invented: the thermometer's resistance at the triple point of water, ohm
bad = 0


def run(*args, check=True):
    p = subprocess.run([B, '--db', DB] + list(args), capture_output=True, text=True, cwd=W)
    if check and p.returncode != 0:
        raise RuntimeError('%s: exit %d: %s' % (' '.join(args), p.returncode, p.stderr))
    return p


def report(ok, name, detail=''):
    global bad
    print('%s its90 %s%s' % ('ok' if ok else 'not ok', name, (': ' + detail) if detail else ''))
    bad += not ok


devs, tws = {}, {}
with open(os.path.join(HERE, 'ref', 'its90-values.txt')) as f:
    for line in f:
        w = line.split()
        if w and w[0] == 'dev':
            bar = w.index('|')
            devs[w[1]] = (w[2:bar], w[bar + 1:])
        elif w and w[0] == 'tw':
            tws.setdefault(w[1], []).append((float(w[2]), float(w[3])))

if os.path.exists(DB):
    os.remove(DB)
run('init')
run('lot', 'add', 'INV-LOT', '--part', 'INV-NTC', '--r25', '10k', '--beta', '3950K',
    '--tol-r25', '1%', '--tol-beta', '1%')
ncoef = {'Ar-TPW': 2, 'Hg-TPW': 1, 'Hg-Ga': 2, 'TPW-Ga': 1, 'TPW-In': 1, 'TPW-Sn': 2,
         'TPW-Zn': 2, 'TPW-Al': 3, 'TPW-Ag': 4}
for k, (rng, (ws, coefs)) in enumerate(sorted(devs.items())):
    vals = coefs[:ncoef[rng]] + ([ws[2]] if rng == 'TPW-Ag' else [])
    ident = 'SPRT-%d' % k
    run('ref', 'add', ident, '--cert', 'INV-%d (invented)' % k, '--its90',
        ','.join([rng, '%rR' % RTPW] + vals))
    serial = 'P-%d' % k
    run('probe', 'add', serial, '--lot', 'INV-LOT')
    csv = os.path.join(W, 'its90-%d.csv' % k)
    with open(csv, 'w') as f:
        f.write('ref_ohms,ohms\n')
        for i, (wv, _) in enumerate(tws[rng]):
            f.write('%r,%d\n' % (wv * RTPW, 20000 - 1000 * i))
    out = run('import', csv, '--probe', serial, '--ref', ident).stdout
    run_id = out.split()[1].rstrip(':')
    got = json.loads(run('show', 'run', run_id, '--json').stdout)['readings']
    worst = max(abs(g['t_k'] - t) for g, (_, t) in zip(got, tws[rng]))
    # W carried as a double (1e-16 relative) moves T by under 1e-9 K
    report(len(got) == len(tws[rng]) and worst < 1e-8, 'import %s' % rng,
           'largest difference from mpmath %.2e K' % worst)

# a reading outside the sub-range: refused, the database unchanged
before = open(DB, 'rb').read()
csv = os.path.join(W, 'outside.csv')
with open(csv, 'w') as f:
    f.write('ref_ohms,ohms\n%r,9000\n%r,8000\n' % (1.2 * RTPW, 3.0 * RTPW))
zn = sorted(devs).index('TPW-Zn')
p = run('import', csv, '--probe', 'P-%d' % zn, '--ref', 'SPRT-%d' % zn, check=False)
report(p.returncode == 65 and 'outside.csv:3' in p.stderr and 'ref_ohms' in p.stderr
       and 'TPW-Zn' in p.stderr and open(DB, 'rb').read() == before,
       'reading outside the sub-range refused', p.stderr.strip())

# a new certificate as a version keeps its ITS-90 values; the record verifies
run('ref', 'set', 'SPRT-%d' % zn, '--cert', 'INV-99 (invented)', '--its90',
    'TPW-Zn,25.4999R,-3.0e-5,3.9e-6', '--why', 'recalibrated (invented)', '--by', 'tester')
v = json.loads(run('ref', 'show', 'SPRT-%d' % zn, '--json').stdout)['versions']
report(len(v) == 2 and v[1]['correction'] == 'its90' and v[1]['rtpw_ohm'] == 25.4999
       and v[1]['a'] == -3.0e-5 and v[1]['b'] == 3.9e-6, 'version keeps its values')
p = run('verify', check=False)
report(p.returncode == 0, 'record verifies', p.stdout.strip().splitlines()[-1] if p.stdout else p.stderr)
sys.exit(1 if bad else 0)
