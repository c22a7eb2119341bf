/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The chained form of a minimal table, for the cores where flash comes first.
**
** Each segment starts where the previous one ends, at the very value it reached there: with
** the state Y (2^-8 counts) at the segment's first code, the segment's slope m (2^-8 counts
** per code) and its length L (1 .. 255 codes), the code d codes in gives floor((Y + m d) / 256)
** for d = 0 .. L, and the next segment starts with Y + m L.  So the table stores no start
** code and no start value: a length byte and the slope in two bytes, 3 bytes a segment, and
** one start state for the whole table.  The lookup walks the segments from the first,
** subtracting lengths from the code's offset, and carries the state in integers exactly as
** the emitted code does (the slope split as m = 256 mh + ml, mh = floor(m / 256) signed and
** 0 <= ml < 256, the state as whole counts and a fraction byte):
**     y += mh x + ((frac + ml x) >> 8),  frac = (frac + ml x) & 255,  x = min(d, L)
** which is floor((Y + m x) / 256) and Y + m x, whole part and fraction.  On the AVR that is
** two 8 x 8 multiplies (mul, mulsu) a segment and no library call.
**
** The search: the start state and each slope fix where the next segment starts, so taking
** the longest segment is not optimal by itself (unlike lut_seg.c's free starts).  From the
** current state, every slope of the three longest feasible lengths (up to 41 of them, evenly
** spread, when there are more) is tried and the one whose next segment then reaches
** furthest is kept; the start state likewise, over the band of the first code in steps of
** 1/16 count.  A heuristic, not a proof of the least count in general: on the reference
** table (12-bit 10k divider, -40 .. 125 degC within 0.05 K) it gives 33 segments, which is
** the least any table of segments of at most 256 codes can have there (a linear-programming
** bound, tests/firmware/chain_check.py), where the free starts of the compact form give 30
** of any length.  The bound itself is exact: every code is checked with the walk's own
** arithmetic before the form is kept. */
#include <limits.h>
#include <stdlib.h>
#include <string.h>

#include "lut_int.h"

enum { CHAIN_MAXLEN = 255, CHAIN_TRY_LENGTHS = 3, CHAIN_TRY_SLOPES = 40 };

static long long ceil_div(long long a, long long b)
{
    return a >= 0 ? (a + b - 1) / b : -((-a) / b);
}

static long long floor_div(long long a, long long b)
{
    return a >= 0 ? a / b : -((-a + b - 1) / b);
}

/* The lengths a segment from offset s with state y can take: the largest (0: none), and in
** ma[L] .. mb[L] (when given) the slopes that keep the codes s .. s + L in their bands,
** within int16_t (the emitted slope's two bytes). */
static long chain_run(const bgi_band *b, long nc, long s, long long y, long long *ma,
                      long long *mb)
{
    long long a = -32768, z = 32767;
    long top = nc - 1 - s < CHAIN_MAXLEN ? nc - 1 - s : CHAIN_MAXLEN, last = 0;
    for (long len = 1; len <= top; len++) {
        long long lo = (long long)b[s + len].lo * 256 - y;
        long long hi = ((long long)b[s + len].hi + 1) * 256 - 1 - y;
        long long na = ceil_div(lo, len), nz = floor_div(hi, len);
        a = na > a ? na : a, z = nz < z ? nz : z;
        if (a > z)
            break;
        if (ma)
            ma[len] = a, mb[len] = z;
        last = len;
    }
    return last;
}

/* The next segment from (s, y): the length and slope among the candidates whose following
** segment reaches furthest (LONG_MAX when the candidate itself ends the table); -1 when no
** segment fits. */
static long chain_pick(const bgi_band *b, long nc, long s, long long y, long *bl, long long *bm)
{
    long long ma[CHAIN_MAXLEN + 1], mb[CHAIN_MAXLEN + 1];
    long top = chain_run(b, nc, s, y, ma, mb), best = -1;
    for (long len = top; len >= 1 && len > top - CHAIN_TRY_LENGTHS; len--) {
        long long a = ma[len], span = mb[len] - ma[len];
        long long nk = span < CHAIN_TRY_SLOPES ? span : CHAIN_TRY_SLOPES;
        for (long long k = 0; k <= nk; k++) {
            long long m = span < CHAIN_TRY_SLOPES ? a + k : a + span * k / CHAIN_TRY_SLOPES;
            long e = s + len, r;
            if (e >= nc - 1)
                r = LONG_MAX;
            else
                r = e + chain_run(b, nc, e, y + m * len, NULL, NULL);
            if (r > best)
                best = r, *bl = len, *bm = m;
        }
    }
    return best;
}

/* The length the emitted table stores for segment i: up to the next start, and for the last
** segment up to code_hi (the walk ends a segment at d = L inclusive). */
static long chain_len(const bg_lut *t, size_t i)
{
    return i + 1 < t->n ? t->sx[i + 1] - t->sx[i] : t->code_hi - t->sx[i];
}

void bgi_lut_chain_start(const bg_lut *t, int32_t *whole, unsigned *frac)
{
    *whole = t->yoff + (int32_t)(t->sy[0] >> 8);
    *frac = (unsigned)t->sy[0] & 255u;
}

void bgi_lut_chain_bytes(const bg_lut *t, size_t i, unsigned *len, int *mh, unsigned *ml)
{
    long m = t->sm[i];
    *len = (unsigned)chain_len(t, i);
    *mh = (int)floor_div(m, 256);
    *ml = (unsigned)(m - 256L * *mh);
}

int32_t bgi_lut_chain_eval(const bg_lut *t, long code)
{
    long d = code - t->code_lo;
    int32_t whole;
    unsigned frac;
    bgi_lut_chain_start(t, &whole, &frac);
    unsigned y = (unsigned)whole & 0xffffu; /* the emitted lookup's 16-bit register pair */
    for (size_t i = 0; i < t->n; i++) {
        unsigned len, ml;
        int mh;
        bgi_lut_chain_bytes(t, i, &len, &mh, &ml);
        unsigned x = d < (long)len ? (unsigned)d : len;
        unsigned q = frac + ml * x; /* 0 .. 65280 */
        y = (y + (unsigned)(mh * (int)x) + (q >> 8)) & 0xffffu;
        if (d <= (long)len)
            return y >= 32768u ? (int32_t)y - 65536 : (int32_t)y;
        frac = q & 255u;
        d -= (long)len;
    }
    return INT32_MIN; /* not reached: the lengths cover the range */
}

/* The chained segments of the bands 'b' into 't' (sx, sy, sm, n, frac 8, yoff): 1, or 0 when a
** code cannot be reached with an int16_t slope, or out of memory. */
static int chain_segments(bg_lut *t, const bgi_band *b, long long yoff)
{
    long nc = t->code_hi - t->code_lo + 1, s = 0, len = 0;
    long long y = 0, m = 0, best = -1;
    size_t cap = (size_t)nc, n = 0; /* a segment spans one code at least */
    /* the start state: the one whose first two segments reach furthest */
    for (long long y0 = (long long)b[0].lo * 256; y0 <= (long long)b[0].hi * 256 + 255; y0 += 16) {
        long r = chain_pick(b, nc, 0, y0, &len, &m);
        if (r > best)
            best = r, y = y0;
    }
    t->sx = malloc((cap + 1) * sizeof *t->sx), t->sy = malloc(cap * sizeof *t->sy);
    t->sm = malloc(cap * sizeof *t->sm);
    if (best < 0 || !t->sx || !t->sy || !t->sm)
        return 0;
    while (s < nc - 1) {
        if (chain_pick(b, nc, s, y, &len, &m) < 0 || n >= cap)
            return 0;
        t->sx[n] = t->code_lo + s, t->sy[n] = (int32_t)(y - yoff * 256), t->sm[n] = (int32_t)m;
        n++;
        s += len, y += m * len;
    }
    t->sx[n] = t->code_hi + 1;
    t->n = n, t->frac = 8, t->yoff = (int32_t)yoff;
    return 1;
}

static void drop(bg_lut *t)
{
    free(t->sx), free(t->sy), free(t->sm);
    t->sx = NULL, t->sy = NULL, t->sm = NULL, t->n = 0;
}

/* The compact minimal form for the same bands (lut.c's target segments: 8 fractional bits
** and int16_t slopes where they fit), in a scratch table, for its cost. */
static int compact_cost(const bg_lut_spec *s, const bg_lut *t, const bgi_band *b, double *cost)
{
    bg_lut c = BG_LUT_INIT;
    c.strategy = t->strategy, c.format = t->format, c.counts_per_k = t->counts_per_k;
    c.code_lo = t->code_lo, c.code_hi = t->code_hi;
    if (bgi_lut_segments(&c, b, 8, NULL) != BG_OK) {
        drop(&c);
        return 0;
    }
    c.narrow = 1;
    for (size_t i = 0; i < c.n; i++)
        c.narrow = c.narrow && c.sm[i] >= -32768 && c.sm[i] <= 32767;
    c.bytes = c.n * (c.narrow ? 8u : 10u) + 2u;
    *cost = bgi_lut_choice_cost(s, &c);
    drop(&c);
    return 1;
}

int bgi_lut_chained_try(const bg_lut_spec *s, bg_lut *t, const bgi_band *b)
{
    long nc = t->code_hi - t->code_lo + 1;
    long long yoff = b[0].lo;
    bg_lut ch = BG_LUT_INIT;
    double compact;
    if (s->target == BG_LUT_HOST || s->strategy != BG_LUT_MINIMAL ||
        s->format == BG_LUT_FLOAT || s->frac_bits >= 0 || t->code_hi + 1 > 65535 || nc < 2)
        return 0;
    for (long c = 0; c < nc; c++) {
        /* values in int16_t, less the 256 counts a partial sum may sit below its value
        ** (y + mh x >= floor(Y / 256) + m x / 256 - x > value - 1 - 255) */
        if (b[c].lo > b[c].hi || b[c].lo < -32768 + 256 || b[c].hi > 32767)
            return 0;
        yoff = b[c].lo < yoff ? b[c].lo : yoff;
    }
    ch.strategy = t->strategy, ch.format = t->format, ch.counts_per_k = t->counts_per_k;
    ch.code_lo = t->code_lo, ch.code_hi = t->code_hi, ch.chained = 1;
    if (!chain_segments(&ch, b, yoff)) {
        drop(&ch);
        return 0;
    }
    ch.bytes = ch.n * 3u;
    /* the bound, code by code, with the walk's own arithmetic */
    for (long c = 0; c < nc; c++) {
        int32_t v = bgi_lut_chain_eval(&ch, t->code_lo + c);
        if (v < b[c].lo || v > b[c].hi) {
            drop(&ch);
            return 0;
        }
    }
    if (compact_cost(s, t, b, &compact) && compact <= bgi_lut_choice_cost(s, &ch)) {
        drop(&ch);
        return 0;
    }
    t->sx = ch.sx, t->sy = ch.sy, t->sm = ch.sm, t->n = ch.n;
    t->frac = 8, t->yoff = ch.yoff, t->narrow = 1, t->chained = 1;
    return 1;
}

double bgi_lut_chain_steps(const bg_lut *t)
{
    double sum = 0.0;
    for (size_t i = 0; i < t->n; i++) /* the codes whose walk ends in segment i visit i + 1 */
        sum += (double)(i + 1) * (double)(chain_len(t, i) + (i == 0 ? 1 : 0));
    return t->n ? sum / (double)(t->code_hi - t->code_lo + 1) : 0.0;
}
