/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* SHA-256 (NIST FIPS 180-4) from GNU Nettle, the well-kept library the record's digests and
** its hash chain rely on; this file only adapts its interface. */
#include <stdio.h>

#include "store_int.h"

void bgi_sha256_init(struct bgi_sha256 *s)
{
    sha256_init(&s->ctx);
}

void bgi_sha256_update(struct bgi_sha256 *s, const void *data, size_t n)
{
    sha256_update(&s->ctx, n, data);
}

void bgi_sha256_final(struct bgi_sha256 *s, unsigned char out[32])
{
    sha256_digest(&s->ctx, SHA256_DIGEST_SIZE, out);
}

void bgi_sha256_hex(const unsigned char digest[32], char hex[65])
{
    for (int i = 0; i < 32; i++)
        snprintf(hex + 2 * i, 3, "%02x", digest[i]);
}
