/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* bg_num_shortest (src/lib/core/shortest.c, the shortest-digits conversion of U. Adams, "Ryu", PLDI 2018)
** against the formatter it replaced, kept here: snprintf "%.{15,16,17}g" ("%.{1..17}g" for
** subnormals), the first that strtod reads back.  The two must write the same bytes for
** millions of doubles: random bit patterns (all exponents), subnormals, powers of ten and of
** two with their neighbours, integers, short decimals.  And against Python's repr() (the
** shortest decimal that reads back, an independent reference) on a sample written by
** tests/ref/repr_sample.py: the same digits, except at powers of two where the old formatter
** wrote the nearest 17-digit decimal and repr a shorter one above (46 of them). */
#include <float.h>
#include <inttypes.h>
#include <math.h>
#include <stdint.h>
#include <string.h>

#include "testutil.h"
#include "../src/lib/core/shortest.c"

static char *old_num(char *buf, size_t size, double v)
{
    if (!isfinite(v)) {
        snprintf(buf, size, "%s", isnan(v) ? "nan" : v > 0 ? "inf" : "-inf");
        return buf;
    }
    for (int prec = v != 0.0 && fabs(v) < DBL_MIN ? 1 : 15; prec <= 17; prec++) {
        snprintf(buf, size, "%.*g", prec, v);
        if (strtod(buf, NULL) == v)
            break;
    }
    return buf;
}

static uint64_t rng_state = 0x9e3779b97f4a7c15u;
static uint64_t rnd(void) /* xorshift64* (Vigna 2016) */
{
    rng_state ^= rng_state >> 12;
    rng_state ^= rng_state << 25;
    rng_state ^= rng_state >> 27;
    return rng_state * 0x2545f4914f6cdd1du;
}

static double from_bits(uint64_t b)
{
    double v;
    memcpy(&v, &b, sizeof v);
    return v;
}

static uint64_t to_bits(double v)
{
    uint64_t b;
    memcpy(&b, &v, sizeof b);
    return b;
}

static size_t n_checked;
static void same(double v)
{
    char a[BG_NUM_SHORTEST], b[BG_NUM_SHORTEST];
    bg_num_shortest(a, sizeof a, v);
    old_num(b, sizeof b, v);
    if (strcmp(a, b) != 0)
        fail_msg("%016" PRIx64 ": new '%s', old '%s'", to_bits(v), a, b);
    n_checked++;
}

static void same_near(double v) /* v and its two neighbours, both signs */
{
    for (int s = 0; s < 2; s++) {
        double w = s ? -v : v;
        same(w);
        same(nextafter(w, INFINITY));
        same(nextafter(w, -INFINITY));
    }
}

static void random_bit_patterns(void **state)
{
    (void)state;
    for (long i = 0; i < 3000000; i++) {
        double v = from_bits(rnd());
        if (isfinite(v))
            same(v);
    }
    for (long i = 0; i < 500000; i++) /* subnormals */
        same(from_bits(rnd() & 0x800fffffffffffffu));
    for (long i = 0; i < 500000; i++) /* values between 1e-5 and 1e17, as data are */
        same(from_bits(0x3ee0000000000000u + rnd() % (0x4380000000000000u - 0x3ee0000000000000u)));
    printf("compared %zu doubles with the old formatter\n", n_checked);
}

static void special_values(void **state)
{
    (void)state;
    char buf[BG_NUM_SHORTEST];
    double specials[] = { 0.0, -0.0, DBL_MIN, DBL_MAX, DBL_TRUE_MIN, DBL_EPSILON, 0.1, 1.0 / 3 };
    for (size_t i = 0; i < sizeof specials / sizeof specials[0]; i++)
        same_near(specials[i]);
    assert_string_equal(bg_num_shortest(buf, sizeof buf, NAN), "nan");
    assert_string_equal(bg_num_shortest(buf, sizeof buf, -INFINITY), "-inf");
    assert_string_equal(bg_num_shortest(buf, sizeof buf, -0.0), "-0");
    assert_string_equal(bg_num_shortest(buf, sizeof buf, 1e15), "1e+15"); /* "%.15g" style */
    assert_string_equal(bg_num_shortest(buf, sizeof buf, 5e-324), "5e-324");
    assert_string_equal(bg_num_shortest(buf, sizeof buf, 0.0025), "0.0025");
    for (int e = -323; e <= 308; e++) { /* powers of ten, read as the decimal says */
        char t[16];
        snprintf(t, sizeof t, "1e%d", e);
        same_near(strtod(t, NULL));
    }
    for (int e = -1074; e <= 1023; e++) /* powers of two */
        same_near(ldexp(1.0, e));
    for (long i = 0; i <= 1000000; i++) /* integers */
        same((double)i);
    for (long i = 0; i < 1000000; i++) { /* integers to 2^53 and short decimals */
        same((double)(rnd() >> 11));
        char t[40];
        snprintf(t, sizeof t, "%" PRIu64 "e%d", rnd() % 10000000u, (int)(rnd() % 80) - 40);
        same(strtod(t, NULL));
    }
    snprintf(buf, 4, "%s", "x"); /* a short buffer is cut as snprintf cuts */
    bg_num_shortest(buf, 4, 0.123456);
    assert_string_equal(buf, "0.1");
}

/* "1.25e-3", "-0.00125", "1250" -> digits "125" and the power of the first digit */
static void digits_of(const char *s, char *dig, int *x)
{
    int n = 0, point = -1, lead = 0, exp10 = 0, started = 0;
    for (const char *p = s; *p; p++) {
        if (*p == '-')
            continue;
        if (*p == '.') {
            point = n + lead;
        } else if (*p == 'e' || *p == 'E') {
            exp10 = atoi(p + 1);
            break;
        } else if (*p == '0' && !started) {
            lead++;
        } else {
            started = 1;
            dig[n++] = *p;
        }
    }
    if (point < 0)
        point = n + lead;
    while (n > 1 && dig[n - 1] == '0')
        n--;
    if (n == 0) { /* zero */
        dig[n++] = '0';
        lead = 1;
        point = 1;
        exp10 = 0;
    }
    dig[n] = '\0';
    *x = point - lead - 1 + exp10;
}

static void python_repr(void **state)
{
    (void)state;
    FILE *f = fopen(REF_DIR "/repr_sample.txt", "r");
    assert_non_null(f);
    char line[128];
    size_t n = 0, powers_of_two = 0;
    while (fgets(line, sizeof line, f)) {
        uint64_t bits;
        char repr[64], ours[BG_NUM_SHORTEST], d1[40], d2[40];
        int x1, x2;
        if (line[0] == '#')
            continue;
        assert_int_equal(sscanf(line, "%" SCNx64 " %63s", &bits, repr), 2);
        double v = from_bits(bits);
        bg_num_shortest(ours, sizeof ours, v);
        assert_true(strtod(ours, NULL) == v);
        digits_of(ours, d1, &x1);
        digits_of(repr, d2, &x2);
        if ((bits & 0x000fffffffffffffu) == 0 && (bits & 0x7ff0000000000000u) > 0x0010000000000000u &&
            strlen(d1) == 17 && strlen(d2) < 17) {
            powers_of_two++;
            continue;
        }
        if (strcmp(d1, d2) != 0 || x1 != x2)
            fail_msg("%016" PRIx64 ": ours '%s', repr '%s'", bits, ours, repr);
        n++;
    }
    fclose(f);
    printf("%zu doubles as repr() writes them, %zu powers of two one digit longer\n", n, powers_of_two);
    assert_true(n > 24000);
    assert_int_equal(powers_of_two, 46); /* of the 2098 positive powers of two in the sample */
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(special_values),
        cmocka_unit_test(random_bit_patterns),
        cmocka_unit_test(python_repr),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
