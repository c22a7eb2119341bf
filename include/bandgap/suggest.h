/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* "Did you mean": the nearest of a list of names to a mistyped one, for messages about an
** unknown command, option, column or serial. */
#ifndef BANDGAP_SUGGEST_H
#define BANDGAP_SUGGEST_H

#include <stddef.h>

#include "bandgap/error.h"

/* The name in 'cands' ('n' of them; NULL entries are skipped) nearest to the 'len' bytes of
** 'word' by edit distance (insertions, deletions, substitutions and swaps of neighbours, one
** edit each; ASCII letters compared without case), when it is near enough to be a likely typo: at most 1 edit for a
** word of up to 4 bytes, 2 up to 8, 3 beyond, and fewer than the word's length.  The first
** of equally near names wins.  NULL when none is near, or 'word' or a name is longer than
** 64 bytes.  Returns a pointer into 'cands'. */
BG_API const char *bg_suggest(const char *word, size_t len, const char *const *cands, size_t n);

#endif
