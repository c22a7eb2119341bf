/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Quantities at the edges of bandgap: temperatures, resistances, relative values and SI
** quantities, each with its unit (a bare number is refused).  t/degC = T/K - 273.15 and
** t/degF = 1.8 t/degC + 32 exactly (ITS-90, Preston-Thomas 1990; common practice for degF). */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "bandgap/units.h"
#include "num_int.h"

static const char *skip_space(const char *s)
{
    while (*s == ' ' || *s == '\t')
        s++;
    return s;
}

static int match_word(const char *s, const char *word)
{
    size_t n = strlen(word);
    return strncmp(s, word, n) == 0 && *skip_space(s + n) == '\0';
}

/* The message for a well-formed decimal beyond the largest finite double, such as "1e999". */
static int too_large(const char *s, bg_error *err)
{
    return bg_error_set(err, BG_EINVAL, "'%s': the number is beyond the largest finite value "
                        "(about 1.8e308)", s);
}

/* Recognise a temperature unit word that fills the rest of 's'. */
static bg_temp_unit unit_word(const char *s)
{
    static const struct { const char *w; bg_temp_unit u; } words[] = {
        { "K", BG_UNIT_K },     { "C", BG_UNIT_C },       { "F", BG_UNIT_F },
        { "c", BG_UNIT_C },     { "f", BG_UNIT_F },       { "\xC2\xB0" "C", BG_UNIT_C },
        { "\xC2\xB0" "F", BG_UNIT_F }, { "degC", BG_UNIT_C }, { "degF", BG_UNIT_F },
        { "\xE2\x84\x83", BG_UNIT_C }, /* U+2103 DEGREE CELSIUS */
    };
    for (size_t i = 0; i < sizeof words / sizeof words[0]; i++)
        if (match_word(s, words[i].w))
            return words[i].u;
    return BG_UNIT_NONE;
}

double bg_units_to_k(double t, bg_temp_unit unit)
{
    switch (unit) {
    case BG_UNIT_C: return t + BG_ZERO_C_K;
    case BG_UNIT_F: return (t - 32.0) / 1.8 + BG_ZERO_C_K;
    default: return t;
    }
}

double bg_units_from_k(double t_k, bg_temp_unit unit)
{
    switch (unit) {
    case BG_UNIT_C: return t_k - BG_ZERO_C_K;
    case BG_UNIT_F: return (t_k - BG_ZERO_C_K) * 1.8 + 32.0;
    default: return t_k;
    }
}

const char *bg_units_symbol(bg_temp_unit unit, int ascii)
{
    switch (unit) {
    case BG_UNIT_C: return ascii ? "C" : "\xC2\xB0" "C";
    case BG_UNIT_F: return ascii ? "F" : "\xC2\xB0" "F";
    default: return "K";
    }
}

int bg_units_parse_unit(const char *s, bg_temp_unit *unit, bg_error *err)
{
    bg_temp_unit u = unit_word(skip_space(s));
    if (u == BG_UNIT_NONE && match_word(skip_space(s), "k"))
        u = BG_UNIT_K; /* as an output unit name alone, 'k' cannot mean kilo */
    if (u == BG_UNIT_NONE)
        return bg_error_set(err, BG_EINVAL, "'%s': not a temperature unit (use C, K or F)", s);
    *unit = u;
    return BG_OK;
}

int bg_units_parse_temp(const char *s, bg_temp_unit default_unit, double *t_k, bg_error *err)
{
    const char *p = skip_space(s);
    double v, k;
    int over;
    size_t n = bgi_num_scan_finite(p, strlen(p), '.', &v, &over);
    bg_temp_unit u;

    if (over)
        return too_large(s, err);
    if (n == 0)
        return bg_error_set(err, BG_EINVAL, "'%s': not a temperature", s);
    p = skip_space(p + n);
    if (*p == '\0') {
        if (default_unit == BG_UNIT_NONE)
            return bg_error_set(err, BG_EINVAL,
                                "'%s': temperature needs a unit (K, C or F), e.g. '%sC'", s,
                                skip_space(s));
        u = default_unit;
    } else if ((u = unit_word(p)) == BG_UNIT_NONE) {
        if (match_word(p, "k"))
            return bg_error_set(err, BG_EINVAL,
                                "'%s': ambiguous unit 'k' (kelvin is 'K')", s);
        return bg_error_set(err, BG_EINVAL, "'%s': unknown temperature unit '%s'", s, p);
    }
    k = bg_units_to_k(v, u);
    if (!(k > 0.0) || !isfinite(k))
        return bg_error_set(err, BG_EINVAL, "'%s': at or below absolute zero", s);
    *t_k = k;
    return BG_OK;
}

/* A temperature difference with its unit into kelvin; 'sign_ok' allows zero and negatives. */
static int parse_difference(const char *s, int sign_ok, double *dt_k, bg_error *err)
{
    const char *p = skip_space(s);
    double v, scale;
    int over;
    size_t n = bgi_num_scan_finite(p, strlen(p), '.', &v, &over);

    if (over)
        return too_large(s, err);
    if (n == 0)
        return bg_error_set(err, BG_EINVAL, "'%s': not a temperature difference", s);
    p = skip_space(p + n);
    if (match_word(p, "mK"))
        scale = 1e-3;
    else if (match_word(p, "uK") || match_word(p, "\xC2\xB5K"))
        scale = 1e-6;
    else if (match_word(p, "F") || match_word(p, "\xC2\xB0" "F") || match_word(p, "degF"))
        scale = 1.0 / 1.8;
    else if (*p == '\0')
        return bg_error_set(err, BG_EINVAL,
                            "'%s': temperature difference needs a unit (K, mK, C or F)", s);
    else if (unit_word(p) == BG_UNIT_K || unit_word(p) == BG_UNIT_C)
        scale = 1.0;
    else
        return bg_error_set(err, BG_EINVAL, "'%s': unknown unit '%s'", s, p);
    if (!sign_ok && !(v > 0.0))
        return bg_error_set(err, BG_EINVAL, "'%s': must be greater than zero", s);
    *dt_k = v * scale;
    return BG_OK;
}

int bg_units_parse_tdiff(const char *s, double *dt_k, bg_error *err)
{
    return parse_difference(s, 0, dt_k, err);
}

int bg_units_parse_tcorr(const char *s, double *dt_k, bg_error *err)
{
    return parse_difference(s, 1, dt_k, err);
}

static double prefix_scale(char c)
{
    switch (c) {
    case 'R': case 'r': return 1.0;
    case 'k': case 'K': return 1e3;
    case 'M': return 1e6;
    case 'G': return 1e9;
    default: return 0.0;
    }
}

/* Strip an optional trailing "ohm", "ohms", "Ω" (U+03A9) or "Ω" (U+2126), then spaces. */
static size_t strip_ohm_word(const char *s, size_t len)
{
    static const char *words[] = { "ohms", "ohm", "\xCE\xA9", "\xE2\x84\xA6" };
    for (size_t i = 0; i < sizeof words / sizeof words[0]; i++) {
        size_t n = strlen(words[i]);
        if (len >= n && memcmp(s + len - n, words[i], n) == 0) {
            len -= n;
            break;
        }
    }
    while (len > 0 && (s[len - 1] == ' ' || s[len - 1] == '\t'))
        len--;
    return len;
}

int bg_units_parse_ohms(const char *s, double *r_ohm, bg_error *err)
{
    const char *p = skip_space(s);
    size_t trim = strlen(p), len, n;
    double v = 0.0, scale = 1.0;
    int over;

    while (trim > 0 && (p[trim - 1] == ' ' || p[trim - 1] == '\t'))
        trim--;
    len = strip_ohm_word(p, trim);

    n = bgi_num_scan_finite(p, len, '.', &v, &over);
    if (over)
        return too_large(s, err);
    if (n == 0)
        return bg_error_set(err, BG_EINVAL, "'%s': not a resistance", s);
    if (n == len && len == trim) /* no prefix, no R, no ohm word */
        return bg_error_set(err, BG_EINVAL, "'%s': a bare number is refused: give the unit, "
                            "R or ohm, or a prefix k, M or G (e.g. 470R, 100ohm, 10k, 4k7, 1M5)",
                            s);
    if (n < len && (p[n] == ' ' || p[n] == '\t')) {
        /* "10 k": a space may separate the number from a prefix, which must then end it. */
        size_t k = n;
        while (k < len && (p[k] == ' ' || p[k] == '\t'))
            k++;
        if (k + 1 != len)
            return bg_error_set(err, BG_EINVAL, "'%s': not a resistance", s);
        if (p[k] == 'm')
            return bg_error_set(err, BG_EINVAL,
                                "'%s': ambiguous prefix 'm' (use M for megaohm)", s);
        scale = prefix_scale(p[k]);
        if (scale == 0.0)
            return bg_error_set(err, BG_EINVAL, "'%s': unknown resistance unit '%c'", s, p[k]);
    } else if (n < len) {
        char c = p[n];
        if (c == 'm')
            return bg_error_set(err, BG_EINVAL,
                                "'%s': ambiguous prefix 'm' (use M for megaohm)", s);
        scale = prefix_scale(c);
        if (scale == 0.0)
            return bg_error_set(err, BG_EINVAL, "'%s': unknown resistance unit '%.*s'", s,
                                (int)(len - n), p + n);
        if (n + 1 < len) {
            /* Infix form "4k7": the prefix is the decimal mark, digits follow. */
            double frac;
            size_t m;
            if (memchr(p, '.', n) || memchr(p, 'e', n) || memchr(p, 'E', n))
                return bg_error_set(err, BG_EINVAL,
                                    "'%s': ambiguous: decimal point and '%c' both used", s, c);
            if (p[n + 1] < '0' || p[n + 1] > '9')
                return bg_error_set(err, BG_EINVAL, "'%s': not a resistance", s);
            for (m = n + 1; m < len; m++)
                if (p[m] < '0' || p[m] > '9')
                    return bg_error_set(err, BG_EINVAL, "'%s': not a resistance", s);
            frac = 0.0;
            for (m = len; m > n + 1; m--)
                frac = (frac + (p[m - 1] - '0')) / 10.0;
            v = (v < 0 ? v - frac : v + frac);
        }
    }
    v *= scale;
    if (!isfinite(v))
        return too_large(s, err);
    if (!(v > 0.0))
        return bg_error_set(err, BG_EINVAL, "'%s': resistance must be greater than zero", s);
    *r_ohm = v;
    return BG_OK;
}

/* A relative value has its unit, since "0.5" could be a fraction (50 %) or a percentage. */
int bg_units_parse_fraction(const char *s, double *frac, bg_error *err)
{
    static const char forms[] = "% or ppm (e.g. 1%, 0.05% or 250ppm)";
    const char *p = skip_space(s);
    double v, scale;
    int over;
    size_t n = bgi_num_scan_finite(p, strlen(p), '.', &v, &over);

    if (over)
        return too_large(s, err);
    if (n == 0)
        return bg_error_set(err, BG_EINVAL, "'%s': not a relative value with its unit, %s", s,
                            forms);
    p = skip_space(p + n);
    if (*p == '\0')
        return bg_error_set(err, BG_EINVAL, "'%s': a bare number is refused: a relative value "
                            "needs its unit, %s", s, forms);
    if (match_word(p, "%"))
        scale = 1e2;
    else if (match_word(p, "ppm"))
        scale = 1e6;
    else
        return bg_error_set(err, BG_EINVAL, "'%s': unknown unit '%s': a relative value takes %s",
                            s, p, forms);
    if (!(v >= 0.0))
        return bg_error_set(err, BG_EINVAL, "'%s': must not be negative", s);
    *frac = v / scale; /* a division by an exact power of ten rounds once: 0.5% is 0.005 */
    return BG_OK;
}

/* The length of an SI prefix at 'p' (0 when there is none) and its power of ten.  'm' is
** milli: the unit symbol must follow it, so it cannot be read as mega. */
static size_t si_prefix(const char *p, int *pow10)
{
    static const struct { const char *w; int e; } px[] = {
        { "p", -12 }, { "n", -9 }, { "u", -6 }, { "\xC2\xB5", -6 }, /* U+00B5 */
        { "\xCE\xBC", -6 },                                          /* U+03BC */
        { "m", -3 },  { "k", 3 },  { "M", 6 },  { "G", 9 },
    };
    for (size_t i = 0; i < sizeof px / sizeof px[0]; i++) {
        size_t n = strlen(px[i].w);
        if (strncmp(p, px[i].w, n) == 0) {
            *pow10 = px[i].e;
            return n;
        }
    }
    return 0;
}

int bg_units_parse_si(const char *s, const char *unit, double *v, bg_error *err)
{
    const char *p = skip_space(s);
    double x;
    int e = 0, over;
    size_t n = bgi_num_scan_finite(p, strlen(p), '.', &x, &over), k;

    if (over)
        return too_large(s, err);
    if (n == 0)
        return bg_error_set(err, BG_EINVAL, "'%s': not a value in %s", s, unit);
    p = skip_space(p + n);
    if (*p == '\0')
        return bg_error_set(err, BG_EINVAL, "'%s': a bare number is refused: give the unit, %s, "
                            "optionally after an SI prefix (p, n, u, m, k, M, G)", s, unit);
    if (!match_word(p, unit) && ((k = si_prefix(p, &e)) == 0 || !match_word(p + k, unit)))
        return bg_error_set(err, BG_EINVAL, "'%s': unknown unit '%s' (expected %s, optionally "
                            "after an SI prefix p, n, u, m, k, M or G)", s, p, unit);
    /* divide by an exact power of ten for the small prefixes, so that 10uA is the double 1e-5 */
    x = e < 0 ? x / pow(10.0, -e) : x * pow(10.0, e);
    if (!isfinite(x))
        return too_large(s, err); /* "1e305GV" */
    if (!(x > 0.0))
        return bg_error_set(err, BG_EINVAL, "'%s': must be greater than zero", s);
    *v = x;
    return BG_OK;
}

char *bg_units_format_si(double v, const char *unit, int sig, char *buf, size_t size)
{
    static const struct { double s; const char *w; } px[] = {
        { 1e9, "G" }, { 1e6, "M" }, { 1e3, "k" }, { 1.0, "" }, { 1e-3, "m" },
        { 1e-6, "\xC2\xB5" }, { 1e-9, "n" }, { 1e-12, "p" },
    };
    size_t i = 0, last = sizeof px / sizeof px[0] - 1;
    if (!(fabs(v) > 0.0) || !isfinite(v))
        i = 3; /* zero, NaN and infinities without a prefix */
    else
        while (i < last && fabs(v) < px[i].s * (1.0 - 0.5 * pow(10.0, 1 - sig)))
            i++;
    snprintf(buf, size, "%.*g %s%s", sig, v / px[i].s, px[i].w, unit);
    return buf;
}

char *bg_units_format_temp(double t_k, bg_temp_unit unit, int decimals, char *buf, size_t size)
{
    double v = bg_units_from_k(t_k, unit);
    if (fabs(v) < 0.5 * pow(10.0, -decimals))
        v = 0.0; /* never print "-0.000" */
    snprintf(buf, size, "%.*f %s", decimals, v, bg_units_symbol(unit, 0));
    return buf;
}

char *bg_units_format_ohms(double r_ohm, int sig, char *buf, size_t size)
{
    /* Only a finite positive value has a magnitude: converting log10(inf) to int is undefined
    ** behaviour.  Callers refuse non-finite values before they print. */
    int mag = r_ohm > 0.0 && isfinite(r_ohm) ? (int)floor(log10(r_ohm)) : 0;
    int dec = sig - 1 - mag;
    if (dec < 0)
        dec = 0;
    snprintf(buf, size, "%.*f", dec, r_ohm);
    return buf;
}
