/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* SHA-256 for the digest of a run's readings, written from NIST FIPS 180-4 (Secure Hash
** Standard, August 2015): section 4.1.2 (functions), 4.2.2 (constants K), 5.1.1 (padding),
** 5.3.3 (initial hash value) and 6.2.2 (the computation).  Words are 32-bit big-endian. */
#include <stdint.h>
#include <stdio.h>
#include <string.h>

#include "store_int.h"

/* FIPS 180-4 section 4.2.2: the first 32 bits of the fractional parts of the cube roots of
** the first 64 primes. */
static const uint32_t K[64] = {
    0x428a2f98, 0x71374491, 0xb5c0fbcf, 0xe9b5dba5, 0x3956c25b, 0x59f111f1, 0x923f82a4,
    0xab1c5ed5, 0xd807aa98, 0x12835b01, 0x243185be, 0x550c7dc3, 0x72be5d74, 0x80deb1fe,
    0x9bdc06a7, 0xc19bf174, 0xe49b69c1, 0xefbe4786, 0x0fc19dc6, 0x240ca1cc, 0x2de92c6f,
    0x4a7484aa, 0x5cb0a9dc, 0x76f988da, 0x983e5152, 0xa831c66d, 0xb00327c8, 0xbf597fc7,
    0xc6e00bf3, 0xd5a79147, 0x06ca6351, 0x14292967, 0x27b70a85, 0x2e1b2138, 0x4d2c6dfc,
    0x53380d13, 0x650a7354, 0x766a0abb, 0x81c2c92e, 0x92722c85, 0xa2bfe8a1, 0xa81a664b,
    0xc24b8b70, 0xc76c51a3, 0xd192e819, 0xd6990624, 0xf40e3585, 0x106aa070, 0x19a4c116,
    0x1e376c08, 0x2748774c, 0x34b0bcb5, 0x391c0cb3, 0x4ed8aa4a, 0x5b9cca4f, 0x682e6ff3,
    0x748f82ee, 0x78a5636f, 0x84c87814, 0x8cc70208, 0x90befffa, 0xa4506ceb, 0xbef9a3f7,
    0xc67178f2,
};

/* Section 4.1.2's functions; Ch and Maj in equivalent forms with one operation fewer. */
#define ROTR(x, n) (((x) >> (n)) | ((x) << (32 - (n))))
#define BSIG0(x) (ROTR(x, 2) ^ ROTR(x, 13) ^ ROTR(x, 22))
#define BSIG1(x) (ROTR(x, 6) ^ ROTR(x, 11) ^ ROTR(x, 25))
#define SSIG0(x) (ROTR(x, 7) ^ ROTR(x, 18) ^ ((x) >> 3))
#define SSIG1(x) (ROTR(x, 17) ^ ROTR(x, 19) ^ ((x) >> 10))
#define CH(e, f, g) ((g) ^ ((e) & ((f) ^ (g))))
#define MAJ(a, b, c) (((a) & (b)) | ((c) & ((a) | (b))))
/* The message schedule in a ring of 16 words: W[t] for t >= 16 replaces W[t - 16]. */
#define SCHED(t) (w[(t) & 15] += SSIG1(w[((t) - 2) & 15]) + w[((t) - 7) & 15] + \
                  SSIG0(w[((t) - 15) & 15]))
/* One round with the working variables named in turn, so that none is copied. */
#define ROUND(a, b, c, d, e, f, g, h, t, wt) do { \
        uint32_t t1 = (h) + BSIG1(e) + CH(e, f, g) + K[t] + (wt); \
        (d) += t1; \
        (h) = t1 + BSIG0(a) + MAJ(a, b, c); \
    } while (0)
#define EIGHT(t, W) do { \
        ROUND(a, b, c, d, e, f, g, h, (t), W((t))); \
        ROUND(h, a, b, c, d, e, f, g, (t) + 1, W((t) + 1)); \
        ROUND(g, h, a, b, c, d, e, f, (t) + 2, W((t) + 2)); \
        ROUND(f, g, h, a, b, c, d, e, (t) + 3, W((t) + 3)); \
        ROUND(e, f, g, h, a, b, c, d, (t) + 4, W((t) + 4)); \
        ROUND(d, e, f, g, h, a, b, c, (t) + 5, W((t) + 5)); \
        ROUND(c, d, e, f, g, h, a, b, (t) + 6, W((t) + 6)); \
        ROUND(b, c, d, e, f, g, h, a, (t) + 7, W((t) + 7)); \
    } while (0)
#define WLOAD(t) w[(t)]

/* One 64-byte block into the hash value (section 6.2.2), its 64 rounds written out eight at
** a time (a digest of a million readings hashes about 70 MB). */
static void compress(uint32_t hv[8], const unsigned char *p)
{
    uint32_t w[16], a, b, c, d, e, f, g, h;
    for (int t = 0; t < 16; t++)
        w[t] = (uint32_t)p[4 * t] << 24 | (uint32_t)p[4 * t + 1] << 16 |
               (uint32_t)p[4 * t + 2] << 8 | (uint32_t)p[4 * t + 3];
    a = hv[0], b = hv[1], c = hv[2], d = hv[3], e = hv[4], f = hv[5], g = hv[6], h = hv[7];
    EIGHT(0, WLOAD);
    EIGHT(8, WLOAD);
    for (int t = 16; t < 64; t += 8)
        EIGHT(t, SCHED);
    hv[0] += a, hv[1] += b, hv[2] += c, hv[3] += d;
    hv[4] += e, hv[5] += f, hv[6] += g, hv[7] += h;
}

void bgi_sha256_init(struct bgi_sha256 *s)
{
    /* section 5.3.3 */
    static const uint32_t h0[8] = { 0x6a09e667, 0xbb67ae85, 0x3c6ef372, 0xa54ff53a,
                                    0x510e527f, 0x9b05688c, 0x1f83d9ab, 0x5be0cd19 };
    memcpy(s->h, h0, sizeof h0);
    s->len = 0;
    s->nbuf = 0;
}

void bgi_sha256_update(struct bgi_sha256 *s, const void *data, size_t n)
{
    const unsigned char *p = data;
    s->len += n;
    if (s->nbuf > 0) {
        size_t k = 64 - s->nbuf < n ? 64 - s->nbuf : n;
        memcpy(s->buf + s->nbuf, p, k);
        s->nbuf += k, p += k, n -= k;
        if (s->nbuf < 64)
            return;
        compress(s->h, s->buf);
        s->nbuf = 0;
    }
    for (; n >= 64; p += 64, n -= 64) /* whole blocks straight from the caller's bytes */
        compress(s->h, p);
    memcpy(s->buf, p, n);
    s->nbuf = n;
}

void bgi_sha256_final(struct bgi_sha256 *s, unsigned char out[32])
{
    /* section 5.1.1: a 1 bit, zeros to 56 bytes mod 64, the length in bits (64-bit) */
    unsigned long long bits = (unsigned long long)s->len * 8u;
    unsigned char pad[72] = { 0x80 };
    size_t npad = (s->nbuf < 56 ? 56 : 120) - s->nbuf;
    for (int i = 0; i < 8; i++)
        pad[npad + (size_t)i] = (unsigned char)(bits >> (56 - 8 * i));
    bgi_sha256_update(s, pad, npad + 8);
    for (int i = 0; i < 8; i++) {
        out[4 * i] = (unsigned char)(s->h[i] >> 24);
        out[4 * i + 1] = (unsigned char)(s->h[i] >> 16);
        out[4 * i + 2] = (unsigned char)(s->h[i] >> 8);
        out[4 * i + 3] = (unsigned char)s->h[i];
    }
}

void bgi_sha256_hex(const unsigned char digest[32], char hex[65])
{
    for (int i = 0; i < 32; i++)
        snprintf(hex + 2 * i, 3, "%02x", digest[i]);
}
