/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* bg_num_shortest: a double in the fewest significant digits that read back exactly, "%g" style.
**
** The digits come from the Ryu algorithm (U. Adams, "Ryu: fast float-to-string conversion",
** PLDI 2018): the value and the two ends of the interval of decimals that round to it are
** scaled by a power of 10 with 128-bit products (tables in pow5_int.h, written by
** tests/ref/ryu_tables.py), then digits are removed while the interval still holds a shorter
** decimal; the last one is rounded to nearest, ties to even.  It gives the shortest decimal
** that reads back, the nearest to the value among those.
**
** The output is the one the program printed before (snprintf "%.{15,16,17}g", the first that
** strtod reads back; "%.{1..17}g" for subnormals): where the interval is symmetric, the
** nearest p-digit decimal reads back as soon as any p-digit decimal does, and a normal double
** has at most one decimal of 15 digits or fewer in its interval.  At a power of two the
** interval below is half the one above, so a shorter decimal above may read back while the
** nearest one below does not: those (one per binade) take the old route.  tests/test_num.c
** compares both on millions of doubles, and with Python's repr(). */
#include <float.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "bandgap/json.h"
#include "pow5_int.h"

__extension__ typedef unsigned __int128 num_u128;

static uint32_t pow5bits(int32_t e) /* ceil(log2(5^e)), e in 0..3528 */
{
    return (uint32_t)(((uint32_t)e * 1217359u) >> 19) + 1u;
}

static uint32_t log10_pow2(int32_t e) /* floor(log10(2^e)), e in 0..1650 */
{
    return ((uint32_t)e * 78913u) >> 18;
}

static uint32_t log10_pow5(int32_t e) /* floor(log10(5^e)), e in 0..2620 */
{
    return ((uint32_t)e * 732923u) >> 20;
}

static int multiple_of_pow5(uint64_t v, uint32_t p)
{
    uint32_t count = 0;
    while (v % 5 == 0 && count < p) {
        v /= 5;
        count++;
    }
    return count >= p;
}

static uint64_t mul_shift(uint64_t m, const uint64_t *mul, int32_t j)
{
    num_u128 b0 = (num_u128)m * mul[0], b2 = (num_u128)m * mul[1];
    return (uint64_t)(((b0 >> 64) + b2) >> (j - 64));
}

typedef struct num_scaled {
    uint64_t vr, vp, vm; /* the value, the upper and the lower end, times 10^-e10 */
    int32_t e10;
    int vm_zeros, vr_zeros; /* the lower end / the value were exact (trailing zeros) */
} num_scaled;

/* Ryu's step 3: the value m2 * 2^e2 and its interval ends in a decimal power base. */
static void scale(uint64_t m2, int32_t e2, uint32_t mm_shift, int accept, num_scaled *s)
{
    uint64_t mv = 4 * m2;
    memset(s, 0, sizeof *s);
    if (e2 >= 0) {
        uint32_t q = log10_pow2(e2) - (e2 > 3);
        int32_t i = -e2 + (int32_t)q + 125 + (int32_t)pow5bits((int32_t)q) - 1;
        s->e10 = (int32_t)q;
        s->vr = mul_shift(mv, NUM_POW5_INV[q], i);
        s->vp = mul_shift(mv + 2, NUM_POW5_INV[q], i);
        s->vm = mul_shift(mv - 1 - mm_shift, NUM_POW5_INV[q], i);
        if (q <= 21) {
            if (mv % 5 == 0)
                s->vr_zeros = multiple_of_pow5(mv, q);
            else if (accept)
                s->vm_zeros = multiple_of_pow5(mv - 1 - mm_shift, q);
            else
                s->vp -= (uint64_t)multiple_of_pow5(mv + 2, q);
        }
    } else {
        uint32_t q = log10_pow5(-e2) - (-e2 > 1);
        int32_t i = -e2 - (int32_t)q;
        int32_t j = (int32_t)q - ((int32_t)pow5bits(i) - 125);
        s->e10 = (int32_t)q + e2;
        s->vr = mul_shift(mv, NUM_POW5[i], j);
        s->vp = mul_shift(mv + 2, NUM_POW5[i], j);
        s->vm = mul_shift(mv - 1 - mm_shift, NUM_POW5[i], j);
        if (q <= 1) {
            s->vr_zeros = 1;
            if (accept)
                s->vm_zeros = mm_shift == 1;
            else
                s->vp--;
        } else if (q < 63) {
            s->vr_zeros = (mv & ((UINT64_C(1) << q) - 1)) == 0;
        }
    }
}

/* Ryu's step 4: remove digits while the interval holds a shorter decimal; round the last.
** Gives the digits in '*out' and the power of ten of the last one. */
static int32_t shortest(num_scaled *s, int accept, uint64_t *out)
{
    int32_t removed = 0;
    unsigned last = 0;
    while (s->vp / 10 > s->vm / 10) {
        s->vm_zeros &= s->vm % 10 == 0;
        s->vr_zeros &= last == 0;
        last = (unsigned)(s->vr % 10);
        s->vr /= 10;
        s->vp /= 10;
        s->vm /= 10;
        removed++;
    }
    if (s->vm_zeros) {
        while (s->vm % 10 == 0) {
            s->vr_zeros &= last == 0;
            last = (unsigned)(s->vr % 10);
            s->vr /= 10;
            s->vp /= 10;
            s->vm /= 10;
            removed++;
        }
    }
    if (s->vr_zeros && last == 5 && s->vr % 2 == 0)
        last = 4; /* exactly half way: to even */
    *out = s->vr + ((s->vr == s->vm && (!accept || !s->vm_zeros)) || last >= 5);
    return s->e10 + removed;
}

/* The old route: the first precision that strtod reads back. */
static char *by_snprintf(char *buf, size_t size, double v)
{
    for (int prec = v != 0.0 && fabs(v) < DBL_MIN ? 1 : 15; prec <= 17; prec++) {
        snprintf(buf, size, "%.*g", prec, v);
        if (strtod(buf, NULL) == v)
            break;
    }
    return buf;
}

/* 'digits' (n of them, the first not 0) times 10^x where x is the first digit's power, as
** "%.{prec}g" writes it with trailing zeros dropped. */
static void write_g(char *buf, size_t size, int neg, const char *digits, int n, int x, int prec)
{
    char t[BG_NUM_SHORTEST + 8];
    int k = 0;
    if (neg)
        t[k++] = '-';
    if (x < -4 || x >= prec) {
        t[k++] = digits[0];
        if (n > 1) {
            t[k++] = '.';
            memcpy(t + k, digits + 1, (size_t)n - 1);
            k += n - 1;
        }
        int ax = abs(x);
        t[k++] = 'e';
        t[k++] = x < 0 ? '-' : '+';
        if (ax >= 100)
            t[k++] = (char)('0' + ax / 100);
        t[k++] = (char)('0' + ax / 10 % 10);
        t[k++] = (char)('0' + ax % 10);
        t[k] = '\0';
    } else if (x < 0) {
        t[k++] = '0';
        t[k++] = '.';
        for (int i = 0; i < -x - 1; i++)
            t[k++] = '0';
        memcpy(t + k, digits, (size_t)n);
        t[k + n] = '\0';
    } else {
        for (int i = 0; i <= x || i < n; i++) {
            if (i == x + 1)
                t[k++] = '.';
            t[k++] = i < n ? digits[i] : '0';
        }
        t[k] = '\0';
    }
    size_t len = strlen(t);
    if (size == 0)
        return;
    if (len >= size)
        len = size - 1; /* as snprintf would cut it */
    memcpy(buf, t, len);
    buf[len] = '\0';
}

char *bg_num_shortest(char *buf, size_t size, double v)
{
    if (!isfinite(v)) {
        snprintf(buf, size, "%s", isnan(v) ? "nan" : v > 0 ? "inf" : "-inf");
        return buf;
    }
    uint64_t bits;
    memcpy(&bits, &v, sizeof bits);
    int neg = (int)(bits >> 63);
    uint64_t mant = bits & ((UINT64_C(1) << 52) - 1);
    uint32_t expo = (uint32_t)((bits >> 52) & 0x7ff);
    if (expo == 0 && mant == 0) {
        snprintf(buf, size, "%s", neg ? "-0" : "0");
        return buf;
    }
    if (mant == 0 && expo > 1)
        return by_snprintf(buf, size, v); /* a power of two: see the top of the file */
    uint64_t m2 = expo == 0 ? mant : mant | (UINT64_C(1) << 52);
    int32_t e2 = (expo == 0 ? 1 : (int32_t)expo) - 1023 - 52 - 2;
    int accept = (m2 & 1) == 0;
    num_scaled s;
    scale(m2, e2, 1, accept, &s);
    uint64_t out;
    int32_t e10 = shortest(&s, accept, &out);
    while (out % 10 == 0) {
        out /= 10;
        e10++;
    }
    char digits[24];
    int n = 0;
    for (uint64_t o = out; o; o /= 10)
        n++;
    for (int i = n - 1; i >= 0; i--, out /= 10)
        digits[i] = (char)('0' + out % 10);
    int x = e10 + n - 1;
    write_g(buf, size, neg, digits, n, x, expo == 0 ? n : n > 15 ? n : 15);
    return buf;
}
