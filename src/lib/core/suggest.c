/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* "Did you mean": edit distance (V. I. Levenshtein, Soviet Physics Doklady 10 (1966) 707) with
** the swap of neighbours as one edit (F. J. Damerau, Comm. ACM 7 (1964) 171), in the restricted
** "optimal string alignment" form, by dynamic programming against each candidate name. */
#include <string.h>

#include "bandgap/suggest.h"

#define MAXLEN 64

static char lower(char c)
{
    return (c >= 'A' && c <= 'Z') ? (char)(c - 'A' + 'a') : c;
}

/* The edit distance between a[0..na) and b[0..nb), both at most MAXLEN bytes, counting the
** swap of two neighbours as one edit, the commonest typo ("optimal string alignment"). */
static size_t distance(const char *a, size_t na, const char *b, size_t nb)
{
    size_t d[3][MAXLEN + 1]; /* rows i - 2, i - 1 and i, used in turn */
    for (size_t j = 0; j <= nb; j++)
        d[0][j] = j;
    for (size_t i = 1; i <= na; i++) {
        size_t *row = d[i % 3], *prev = d[(i + 2) % 3], *prev2 = d[(i + 1) % 3];
        row[0] = i;
        for (size_t j = 1; j <= nb; j++) {
            size_t sub = prev[j - 1] + (lower(a[i - 1]) != lower(b[j - 1]));
            size_t del = prev[j] + 1, ins = row[j - 1] + 1;
            size_t v = sub < del ? (sub < ins ? sub : ins) : (del < ins ? del : ins);
            if (i > 1 && j > 1 && lower(a[i - 1]) == lower(b[j - 2]) &&
                lower(a[i - 2]) == lower(b[j - 1]) && prev2[j - 2] + 1 < v)
                v = prev2[j - 2] + 1;
            row[j] = v;
        }
    }
    return d[na % 3][nb];
}

const char *bg_suggest(const char *word, size_t len, const char *const *cands, size_t n)
{
    size_t limit = len <= 4 ? 1 : len <= 8 ? 2 : 3, best = (size_t)-1;
    const char *pick = NULL;
    if (!word || len == 0 || len > MAXLEN)
        return NULL;
    if (limit >= len)
        limit = len - 1;
    for (size_t i = 0; i < n; i++) {
        size_t nc;
        if (!cands[i] || (nc = strlen(cands[i])) > MAXLEN)
            continue;
        size_t d = distance(word, len, cands[i], nc);
        if (d <= limit && d < best)
            best = d, pick = cands[i];
    }
    return pick;
}
