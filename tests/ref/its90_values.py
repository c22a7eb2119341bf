#!/usr/bin/env python3
# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
# Writes tests/ref/its90-values.txt, the check values of tests/test_its90.c, computed with
# mpmath at 40 digits from the equations of H. Preston-Thomas, "The International Temperature
# Scale of 1990 (ITS-90)", Metrologia 27 (1990) 3-10: the reference function (9a)/(10a) with
# the constants of Table 4, its exact inverse (root finding, not the text's approximations
# (9b)/(10b)), and the deviation functions of section 3.3 for invented thermometers (their W
# at the fixed points are invented, labelled so).  This is an implementation of its own,
# written apart from src/lib/reference/its90.c.
#   python3 tests/ref/its90_values.py > tests/ref/its90-values.txt
import mpmath as mp

mp.mp.dps = 40
A = ['-2.13534729', '3.18324720', '-1.80143597', '0.71727204', '0.50344027', '-0.61899395',
     '-0.05332322', '0.28021362', '0.10715224', '-0.29302865', '0.04459872', '0.11868632',
     '-0.05248134']
C = ['2.78157254', '1.64650916', '-0.13714390', '-0.00649767', '-0.00234444', '0.00511868',
     '0.00187982', '-0.00204472', '-0.00046122', '0.00045724']
A = [mp.mpf(a) for a in A]
C = [mp.mpf(c) for c in C]


def wr(t):
    t = mp.mpf(t)
    if t <= mp.mpf('273.16'):
        x = (mp.log(t / mp.mpf('273.16')) + mp.mpf('1.5')) / mp.mpf('1.5')
        return mp.exp(sum(a * x ** i for i, a in enumerate(A)))
    y = (t - mp.mpf('754.15')) / 481
    return sum(c * y ** i for i, c in enumerate(C))


def t_of_wr(w):
    lo, hi = (mp.mpf('13.8033'), mp.mpf('273.16')) if w <= 1 else (mp.mpf('273.16'), mp.mpf('1234.93'))
    return mp.findroot(lambda t: wr(t) - w, (lo, hi), solver='anderson')


PTS = {'Ar': '83.8058', 'Hg': '234.3156', 'Ga': '302.9146', 'In': '429.7485', 'Sn': '505.078',
       'Zn': '692.677', 'Al': '933.473', 'Ag': '1234.93'}
RANGES = [  # name, points, basis
    ('Ar-TPW', ['Ar', 'Hg'], ['u', 'ulnw']), ('Hg-TPW', ['Hg'], ['u']),
    ('Hg-Ga', ['Hg', 'Ga'], ['u', 'u2']), ('TPW-Ga', ['Ga'], ['u']), ('TPW-In', ['In'], ['u']),
    ('TPW-Sn', ['In', 'Sn'], ['u', 'u2']), ('TPW-Zn', ['Sn', 'Zn'], ['u', 'u2']),
    ('TPW-Al', ['Sn', 'Zn', 'Al'], ['u', 'u2', 'u3']),
    ('TPW-Ag', ['Sn', 'Zn', 'Al', 'Ag'], ['u', 'u2', 'u3', 'dal'])]


def fn(kind, w, wal):
    u = w - 1
    if kind == 'u': return u
    if kind == 'u2': return u * u
    if kind == 'u3': return u ** 3
    if kind == 'ulnw': return u * mp.log(w)
    return (w - wal) ** 2 if w > wal else mp.mpf(0)


def invented_w(name, p):
    # invented thermometer: W - W_r = -3.1e-5 (W-1) + 4.0e-6 (W-1)^2 + small per point
    w0 = wr(PTS[p])
    tweak = {'Ar': '2e-7', 'Hg': '-1e-7', 'Ga': '3e-8', 'In': '-5e-8', 'Sn': '7e-8',
             'Zn': '-4e-8', 'Al': '6e-8', 'Ag': '-9e-8'}[p]
    return w0 - mp.mpf('3.1e-5') * (w0 - 1) + mp.mpf('4.0e-6') * (w0 - 1) ** 2 + mp.mpf(tweak)


print('# ITS-90 check values: mpmath %s, 40 digits; written by tests/ref/its90_values.py' % mp.__version__)
print('# wr T90_K W_r(T90)            (reference function, Preston-Thomas 1990 (9a)/(10a), Table 4)')
for t in ['13.8033', '20', '24.5561', '54.3584', '77.35', '100', '150', '200', '250', '273.15',
          '273.16', '280', '300', '373.15', '500', '700', '900', '1100', '1234.93']:
    print('wr %s %s' % (t, mp.nstr(wr(t), 25)))
print('# inv W_r T90_K                 (exact inverse of the reference function)')
for w in ['0.002', '0.01', '0.1', '0.5', '0.9', '0.99999', '1.00001', '1.2', '2', '3', '4.2']:
    print('inv %s %s' % (w, mp.nstr(t_of_wr(mp.mpf(w)), 25)))
print('# dev RANGE W1 .. Wn | a b c d   (invented thermometer; coefficients solved exactly)')
print('# tw RANGE W T90_K               (T90 of that thermometer at W)')
for name, pts, basis in RANGES:
    ws = [invented_w(name, p) for p in pts]
    wal = ws[2] if name == 'TPW-Ag' else mp.mpf(0)
    n = min(len(ws), 3)
    M = mp.matrix([[fn(basis[k], ws[i], wal) for k in range(n)] for i in range(n)])
    r = mp.matrix([ws[i] - wr(PTS[pts[i]]) for i in range(n)])
    x = list(mp.lu_solve(M, r))
    if len(ws) == 4:
        rest = ws[3] - wr(PTS['Ag']) - sum(x[k] * fn(basis[k], ws[3], wal) for k in range(3))
        x.append(rest / fn('dal', ws[3], wal))
    x += [mp.mpf(0)] * (4 - len(x))
    print('dev %s %s | %s' % (name, ' '.join(mp.nstr(w, 25) for w in ws),
                              ' '.join(mp.nstr(v, 25) for v in x)))
    lo = mp.mpf(PTS[pts[0]]) if name.startswith(('Ar', 'Hg')) else mp.mpf('273.16')
    hi = mp.mpf('273.16') if name.endswith('TPW') else mp.mpf(PTS[pts[-1]])
    for f in ['0.1', '0.37', '0.5', '0.81', '0.99']:
        t = lo + (hi - lo) * mp.mpf(f)
        dw = lambda w: sum(x[k] * fn(basis[k], w, wal) for k in range(len(basis)))
        w = mp.findroot(lambda w: w - dw(w) - wr(t), wr(t))
        print('tw %s %s %s' % (name, mp.nstr(w, 25), mp.nstr(t, 25)))
