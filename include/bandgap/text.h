/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Clean text: what a text field of the record may hold, and the one UTF-8 decoder that the
** checks at the door and the escapers on the way out share. */
#ifndef BANDGAP_TEXT_H
#define BANDGAP_TEXT_H

#include <stddef.h>
#include <stdint.h>

#include "bandgap/error.h"

/* The code point at s[0..n) in UTF-8 (RFC 3629: shortest form, no surrogates, at most
** U+10FFFF) into '*cp'; returns its length in bytes (1 to 4), or 0 if s[0] does not start a
** valid sequence (then '*cp' is the byte itself). */
BG_API size_t bg_utf8_decode(const unsigned char *s, size_t n, uint32_t *cp);

/* Whether a code point must not appear in a text field: the C0 controls but tab, DEL, the C1
** controls, and the bidirectional embeddings, overrides and isolates (U+202A..U+202E,
** U+2066..U+2069), which can make a printed value read in an order other than the stored one. */
BG_API int bg_text_forbidden(uint32_t cp);

/* Check that 's' (n bytes) is clean: valid UTF-8 with no forbidden code point.  On a flaw,
** fills 'err' (BG_EINVAL) with "FIELD: <what> at byte K" and returns BG_EINVAL. */
BG_API int bg_text_check(const char *field, const char *s, size_t n, bg_error *err);

#endif
