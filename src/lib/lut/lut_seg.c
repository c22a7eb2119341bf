/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Non-uniform tables: the fewest segments for a bound, and the on-curve count to beat.
**
** A segment starting at code s outputs, at code c, yoff + floor((Y + m (c - s)) / 2^F) for
** integers Y, m.  The bound at c is an integer band [lo_c, hi_c] of outputs, so the segment
** meets it iff  (lo_c - yoff) 2^F <= Y + m (c - s) <= (hi_c - yoff + 1) 2^F - 1  for every c:
** a set of integer points (Y, m) in a convex polygon.  For a fixed m the feasible Y form the
** interval [G(m), H(m)] with G(m) = max_c (lo'_c - m d_c) convex and H(m) = min_c (hi'_c -
** m d_c) concave, so G - H is convex in m and its minimum over the integers is found by a
** binary search on the sign of its forward difference: the test is exact.
**
** Feasibility is hereditary: the codes s' .. e' of a feasible s .. e are met by the same line,
** started at s' with Y' = Y + m (s' - s).  Then taking, from the first uncovered code, the
** longest feasible segment is optimal (the usual exchange argument: after k segments the
** greedy cover reaches at least as far as any cover with k segments), so the count is the
** exact minimum for this arithmetic.  tests/test_lut.c checks it against an exhaustive
** search over all segmentations and all (Y, m) on small ranges.
**
** The values of a classic table lie on the curve; the interpolation between neighbours is
** fixed by them.  Its fewest breakpoints come from a shortest path over the codes (greedy is
** not minimal there: the curve's inflection lets a longer chord fit where a shorter one did
** not); a chord from i is tested against a cone of slopes narrowed code by code, which ends
** the scan from i when it empties. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "lut_int.h"

/* G(m) - H(m) over the codes s .. e */
static long long gap(const bgi_band *b, long s, long e, unsigned frac, long long yoff, long long m,
                     long long *g_out, long long *h_out)
{
    long long g = -(1LL << 62), h = 1LL << 62;
    for (long c = s; c <= e; c++) {
        long long md = m * (long long)(c - s);
        long long lo = (b[c].lo - yoff) * (1LL << frac) - md;
        long long hi = (b[c].hi - yoff + 1) * (1LL << frac) - 1 - md;
        if (lo > g)
            g = lo;
        if (hi < h)
            h = hi;
    }
    if (g_out)
        *g_out = g, *h_out = h;
    return g - h;
}

static long long floor_div(long long a, long long b)
{
    long long q = a / b;
    return (a % b != 0 && ((a < 0) != (b < 0))) ? q - 1 : q;
}

int bgi_lut_feasible(const bgi_band *b, long s, long e, unsigned frac, long long yoff,
                     long long *y, long long *m)
{
    long long one = 1LL << frac, mlo, mhi, g, h;
    if (e == s) {
        *m = 0;
        *y = (b[s].lo - yoff) * one + ((b[s].hi - b[s].lo + 1) * one - 1) / 2;
        return 1;
    }
    /* the first and last codes alone bound the slope */
    long long n1 = e - s;
    mlo = -floor_div(-((b[e].lo - yoff) * one - ((b[s].hi - yoff + 1) * one - 1)), n1);
    mhi = floor_div((b[e].hi - yoff + 1) * one - 1 - (b[s].lo - yoff) * one, n1);
    if (mlo > mhi)
        return 0;
    while (mlo < mhi) {
        long long mid = mlo + (mhi - mlo) / 2;
        if (gap(b, s, e, frac, yoff, mid + 1, NULL, NULL) >=
            gap(b, s, e, frac, yoff, mid, NULL, NULL))
            mhi = mid;
        else
            mlo = mid + 1;
    }
    if (gap(b, s, e, frac, yoff, mlo, &g, &h) > 0)
        return 0;
    *m = mlo;
    *y = g + (h - g) / 2; /* the middle of the feasible starts */
    return 1;
}

int bgi_lut_segments(bg_lut *t, const bgi_band *b, int frac_req, bg_error *err)
{
    long ncode = t->code_hi - t->code_lo + 1, s = 0, prev = 1;
    long long yoff = b[0].lo, top = b[0].hi;
    size_t cap = 16, n = 0;
    unsigned frac;

    for (long c = 0; c < ncode; c++) {
        if (b[c].lo > b[c].hi)
            return bg_error_set(err, BG_EINVAL, "at code %ld no output value is within the "
                                "bound: it is below the output's resolution", t->code_lo + c);
        yoff = b[c].lo < yoff ? b[c].lo : yoff;
        top = b[c].hi > top ? b[c].hi : top;
    }
    /* Y + m d stays in 0 .. (top - yoff + 1) 2^F <= 2^29, and |m d| below 2^30: int32 */
    long long span = top - yoff + 1;
    if (frac_req >= 0)
        frac = (unsigned)frac_req;
    else
        for (frac = 16; frac > 0 && span * (1LL << frac) > (1LL << 29); frac--)
            ;
    if (span * (1LL << frac) > (1LL << 29))
        return bg_error_set(err, BG_EINVAL, "the values span %lld counts: too many for 32-bit "
                            "segments (use a coarser resolution)", span);
    t->frac = frac, t->yoff = (int32_t)yoff;
    t->sx = malloc(cap * sizeof *t->sx), t->sy = malloc(cap * sizeof *t->sy);
    t->sm = malloc(cap * sizeof *t->sm);
    if (!t->sx || !t->sy || !t->sm)
        return bg_error_set(err, BG_ENOMEM, "out of memory for segments");
    while (s < ncode) {
        long long y, m;
        long ok = s, bad = -1, e;
        /* gallop from the previous length, then bisect between the last fit and first miss */
        for (long step = prev < 2 ? 2 : prev;;) {
            e = s + step - 1 < ncode - 1 ? s + step - 1 : ncode - 1;
            if (e <= ok)
                break; /* s is the last code */
            if (!bgi_lut_feasible(b, s, e, frac, yoff, &y, &m)) {
                bad = e;
                break;
            }
            ok = e;
            if (e == ncode - 1)
                break;
            step *= 2;
        }
        while (bad > ok + 1) {
            long mid = ok + (bad - ok) / 2;
            if (bgi_lut_feasible(b, s, mid, frac, yoff, &y, &m))
                ok = mid;
            else
                bad = mid;
        }
        bgi_lut_feasible(b, s, ok, frac, yoff, &y, &m);
        if (n + 1 >= cap) {
            cap *= 2;
            long *nx = realloc(t->sx, cap * sizeof *nx);
            if (nx)
                t->sx = nx;
            int32_t *ny = realloc(t->sy, cap * sizeof *ny);
            if (ny)
                t->sy = ny;
            int32_t *nm = realloc(t->sm, cap * sizeof *nm);
            if (nm)
                t->sm = nm;
            if (!nx || !ny || !nm)
                return bg_error_set(err, BG_ENOMEM, "out of memory for segments");
        }
        t->sx[n] = t->code_lo + s, t->sy[n] = (int32_t)y, t->sm[n] = (int32_t)m;
        n++;
        prev = ok - s + 1;
        s = ok + 1;
    }
    t->sx[n] = t->code_hi + 1;
    t->n = n;
    return BG_OK;
}

/* round half away from zero of a / b, b > 0 */
static long long rdiv(long long a, long long b)
{
    return a >= 0 ? (a + b / 2) / b : -((-a + b / 2) / b);
}

int bgi_lut_oncurve_ok(const long long *on, const bgi_band *b, size_t i, size_t j)
{
    long long dy = on[j] - on[i], dx = (long long)(j - i);
    for (size_t c = i + 1; c < j; c++) {
        long long o = on[i] + rdiv(dy * (long long)(c - i), dx);
        if (o < b[c].lo || o > b[c].hi)
            return 0;
    }
    return 1;
}

size_t bgi_lut_oncurve_min(const long long *on, const bgi_band *b, size_t nc)
{
    size_t *best = malloc(nc * sizeof *best), res = 0;
    if (!best)
        return 0;
    for (size_t c = 0; c < nc; c++)
        best[c] = (size_t)-1;
    if (on[0] >= b[0].lo && on[0] <= b[0].hi)
        best[0] = 1;
    for (size_t i = 0; i + 1 < nc; i++) {
        if (best[i] == (size_t)-1)
            continue;
        double slo = -INFINITY, shi = INFINITY;
        for (size_t j = i + 1; j < nc; j++) {
            double d = (double)(j - i), s = (double)(on[j] - on[i]) / d;
            double tol = 1e-9 * (1.0 + fabs(s));
            if (on[j] >= b[j].lo && on[j] <= b[j].hi && s >= slo - tol && s <= shi + tol &&
                best[i] + 1 < best[j]) {
                /* strictly inside the cone: every code between rounds into its band */
                if ((s > slo + tol && s < shi - tol) || bgi_lut_oncurve_ok(on, b, i, j))
                    best[j] = best[i] + 1;
            }
            double a = ((double)(b[j].lo - on[i]) - 0.5) / d;
            double z = ((double)(b[j].hi - on[i]) + 0.5) / d;
            slo = a > slo ? a : slo;
            shi = z < shi ? z : shi;
            if (slo > shi + 1e-9 * (1.0 + fabs(shi)))
                break;
        }
    }
    if (best[nc - 1] != (size_t)-1)
        res = best[nc - 1];
    free(best);
    return res;
}

/* The largest bucket shift for which no bucket holds more than 'cmp' segment changes. */
static unsigned index_shift(const bg_lut *t, unsigned cmp)
{
    long ncode = t->code_hi - t->code_lo + 1;
    for (unsigned k = 24;; k--) {
        long bucket = 1L << k;
        int ok = 1;
        size_t i = 0;
        if (bucket > 2 * ncode && k > 0)
            continue;
        for (long b0 = 0; b0 < ncode && ok; b0 += bucket) {
            long last = b0 + bucket - 1 < ncode - 1 ? b0 + bucket - 1 : ncode - 1;
            while (t->sx[i + 1] - t->code_lo <= b0)
                i++;
            /* at most 'cmp' segment starts after the bucket's first code */
            if (i + cmp + 1 <= t->n && t->sx[i + cmp + 1] - t->code_lo <= last)
                ok = 0;
        }
        if (ok || k == 0)
            return k;
    }
}

int bgi_lut_index(bg_lut *t, bg_error *err)
{
    long ncode = t->code_hi - t->code_lo + 1;
    if (t->aligned) { /* the grid is the index's: no comparison */
        t->icmp = 0;
        t->nidx = (size_t)((ncode - 1) >> t->ishift) + 1;
        if (!(t->idx = malloc(t->nidx * sizeof *t->idx)))
            return bg_error_set(err, BG_ENOMEM, "out of memory for the index");
        size_t i = 0;
        for (size_t b0 = 0; b0 < t->nidx; b0++) {
            while (t->sx[i + 1] - t->code_lo <= (long)(b0 << t->ishift))
                i++;
            t->idx[b0] = (uint16_t)i;
        }
        return BG_OK;
    }
    /* one comparison, or two when that halves the index or better; the smaller in bytes */
    unsigned k1 = index_shift(t, 1), k2 = index_shift(t, 2);
    size_t n1 = (size_t)((ncode - 1) >> k1) + 1, n2 = (size_t)((ncode - 1) >> k2) + 1;
    unsigned k = n2 < n1 ? k2 : k1;
    t->icmp = n2 < n1 ? 2 : 1;
    t->ishift = k;
    t->nidx = (size_t)((ncode - 1) >> k) + 1;
    t->idx = malloc(t->nidx * sizeof *t->idx);
    if (!t->idx)
        return bg_error_set(err, BG_ENOMEM, "out of memory for the index");
    size_t i = 0;
    for (size_t b0 = 0; b0 < t->nidx; b0++) {
        long off = (long)(b0 << k);
        while (t->sx[i + 1] - t->code_lo <= off)
            i++;
        t->idx[b0] = (uint16_t)i;
    }
    return BG_OK;
}

/* ---- the AVR's aligned form of an indexed table ----
** Segments that start on a grid of 2^k codes from code_lo and span at most 256 codes: the
** index then names a code's segment with no comparison, and the code's offset into it is one
** byte.  With the values in int16_t (less a byte of margin) and the slopes in int16_t at 8
** fractional bits, the AVR lookup splits the slope m = 256 mh + ml (mh = floor(m / 256),
** 0 <= ml < 256) and the start sy = 256 q + r (0 <= r < 256) and returns
**     (yoff + q) + mh d + ((r + ml d) >> 8)
** with two 8 x 8 multiplies the core does inline; that is exactly yoff + ((sy + sm d) >> 8)
** (the floor of a sum whose part r + ml d lies in 0 .. 65280), the library's value. */

/* The fewest segments on the grid 2^k (greedy: feasibility is hereditary, so the longest
** run of whole buckets from the first uncovered one is optimal for the grid); 0 when a
** bucket alone is infeasible, or out of memory. */
static size_t aligned_segments(bg_lut *t, const bgi_band *b, unsigned k, long long yoff)
{
    long ncode = t->code_hi - t->code_lo + 1, grid = 1L << k, s = 0, maxj = 256 >> k;
    size_t n = 0, cap = (size_t)((ncode + grid - 1) / grid) + 1;
    t->sx = malloc(cap * sizeof *t->sx), t->sy = malloc(cap * sizeof *t->sy);
    t->sm = malloc(cap * sizeof *t->sm);
    if (!t->sx || !t->sy || !t->sm)
        return 0;
    while (s < ncode) {
        long long y = 0, m = 0;
        long left = (ncode - s + grid - 1) / grid, ok = 1, bad;
        bad = (left < maxj ? left : maxj) + 1;
        /* j buckets from s (the last one may be cut by the end of the range) */
        if (!bgi_lut_feasible(b, s, s + grid - 1 < ncode - 1 ? s + grid - 1 : ncode - 1, 8,
                              yoff, &y, &m))
            return 0; /* a single bucket does not fit one line */
        while (bad > ok + 1) {
            long j = ok + (bad - ok) / 2, e = s + j * grid - 1;
            if (bgi_lut_feasible(b, s, e < ncode - 1 ? e : ncode - 1, 8, yoff, &y, &m))
                ok = j;
            else
                bad = j;
        }
        long e = s + ok * grid - 1 < ncode - 1 ? s + ok * grid - 1 : ncode - 1;
        bgi_lut_feasible(b, s, e, 8, yoff, &y, &m);
        if (m < -32768 || m > 32767)
            return 0;
        t->sx[n] = t->code_lo + s, t->sy[n] = (int32_t)y, t->sm[n] = (int32_t)m;
        n++;
        s = e + 1;
    }
    t->sx[n] = t->code_hi + 1;
    return n;
}

static void drop_segments(bg_lut *t)
{
    free(t->sx), free(t->sy), free(t->sm), free(t->idx);
    t->sx = NULL, t->sy = NULL, t->sm = NULL, t->idx = NULL, t->n = 0, t->nidx = 0;
}

/* The compact indexed form for the same bands (8 fractional bits, narrow slopes), in a
** scratch table, for its cost; 0 when it cannot be built so. */
static int compact_form(const bg_lut *t, const bgi_band *b, bg_lut *c)
{
    *c = (bg_lut)BG_LUT_INIT;
    c->strategy = t->strategy, c->format = t->format, c->counts_per_k = t->counts_per_k;
    c->code_lo = t->code_lo, c->code_hi = t->code_hi;
    if (bgi_lut_segments(c, b, 8, NULL) != BG_OK)
        return 0;
    for (size_t i = 0; i < c->n; i++)
        if (c->sm[i] < -32768 || c->sm[i] > 32767)
            return 0;
    c->narrow = 1;
    if (bgi_lut_index(c, NULL) != BG_OK)
        return 0;
    c->bytes = c->n * 8u + 2u + c->nidx * (c->n <= 256 ? 1u : 2u);
    return 1;
}

int bgi_lut_aligned_try(const bg_lut_spec *s, bg_lut *t, const bgi_band *b)
{
    long ncode = t->code_hi - t->code_lo + 1;
    long long yoff = b[0].lo;
    bg_lut best = BG_LUT_INIT, cand, compact;
    if (s->target != BG_LUT_AVR || s->strategy != BG_LUT_INDEXED ||
        s->format == BG_LUT_FLOAT || s->frac_bits >= 0 || t->code_hi + 1 > 65535)
        return 0;
    for (long c = 0; c < ncode; c++) {
        if (b[c].lo > b[c].hi || b[c].lo < -32768 + 255 || b[c].hi > 32767)
            return 0; /* a value outside int16_t, less the byte the sum may pass through */
        yoff = b[c].lo < yoff ? b[c].lo : yoff;
    }
    /* every grid up to 2^8 codes; the fewest bytes (6 a segment, 1 an index entry) */
    for (unsigned k = 0; k <= 8; k++) {
        cand = (bg_lut)BG_LUT_INIT;
        cand.code_lo = t->code_lo, cand.code_hi = t->code_hi;
        cand.n = aligned_segments(&cand, b, k, yoff);
        size_t nidx = (size_t)((ncode - 1) >> k) + 1;
        cand.bytes = cand.n * 6u + nidx;
        if (cand.n == 0 || cand.n > 256 || (best.n && cand.bytes >= best.bytes)) {
            drop_segments(&cand);
            continue;
        }
        drop_segments(&best);
        best = cand, best.ishift = k;
    }
    if (best.n == 0)
        return 0;
    best.strategy = t->strategy, best.format = t->format, best.counts_per_k = t->counts_per_k;
    best.narrow = 1, best.aligned = 1, best.frac = 8, best.yoff = (int32_t)yoff;
    /* against the compact form, by what the user asked to minimise (lut_target.c) */
    if (compact_form(t, b, &compact) && bgi_lut_choice_cost(s, &compact) <
                                            bgi_lut_choice_cost(s, &best)) {
        drop_segments(&best), drop_segments(&compact);
        return 0;
    }
    drop_segments(&compact);
    t->sx = best.sx, t->sy = best.sy, t->sm = best.sm, t->n = best.n;
    t->frac = 8, t->yoff = best.yoff, t->narrow = 1, t->aligned = 1, t->ishift = best.ishift;
    return 1;
}
