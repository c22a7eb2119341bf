/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Internal: the pieces of the table builder shared by lut.c and lut_seg.c. */
#ifndef BANDGAP_LUT_INT_H
#define BANDGAP_LUT_INT_H

#include "bandgap/lut.h"

/* The integer band of one code: outputs lo .. hi (counts) keep it within the bound.  32 bits
** each: at 2^24 codes the bands are 128 MiB, the largest array of a build. */
typedef struct bgi_band {
    int32_t lo, hi;
} bgi_band;

/* The bands of the codes t->code_lo .. t->code_hi at exact temperatures 'tk': the outputs o
** with |o / cpk + off - tk| <= e, settled with the expression the measurement uses.  BG_OK,
** or BG_EINVAL (in 'err') when an output does not fit 32 bits. */
int bgi_lut_make_bands(const bg_lut *t, const double *tk, double cpk, double off, double e,
                        bgi_band *b, bg_error *err);

/* Segments for the codes t->code_lo .. t->code_hi whose output counts must lie in band[c -
** code_lo]; 'frac' fixed-point bits (-1: automatic).  Fills t->n, sx, sy, sm, frac, yoff. */
int bgi_lut_segments(bg_lut *t, const bgi_band *band, int frac, bg_error *err);

/* Whether one line start 'y', slope 'm' (at 'frac' bits, relative to 'yoff') keeps the codes
** s .. e (offsets from code_lo) inside their bands; the exact test the search uses. */
int bgi_lut_feasible(const bgi_band *band, long s, long e, unsigned frac, long long yoff,
                     long long *y, long long *m);

/* The fewest breakpoints of a table whose values lie on the curve ('on' counts at every code,
** rounded) read with y_i + round((y_j - y_i)(c - x_i) / (x_j - x_i)); 0 when none exists. */
size_t bgi_lut_oncurve_min(const long long *on, const bgi_band *band, size_t ncodes);

/* The same interpolation, checked code by code (exact integer arithmetic). */
int bgi_lut_oncurve_ok(const long long *on, const bgi_band *band, size_t i, size_t j);

/* The index of an indexed table: the largest bucket shift for which each bucket holds at
** most one segment change, or two when that makes the index smaller.  Fills t->idx, nidx,
** ishift, icmp. */
int bgi_lut_index(bg_lut *t, bg_error *err);

/* For an indexed table of integer values emitted for the AVR: the aligned form (segments on
** the index's grid of 2^ishift codes, at most 256 codes each, values and slopes in 16 bits;
** lut_seg.c) in 't' when it can be built and costs less than the compact form by what
** 's->optimize' minimises: 1 (t->sx, sy, sm, n, frac, yoff, narrow, aligned, ishift set),
** otherwise 0 and 't' untouched. */
int bgi_lut_aligned_try(const bg_lut_spec *s, bg_lut *t, const bgi_band *band);

/* For a minimal table of integer values emitted for a target core: the chained form
** (lut_chain.c) in 't' when it can be built and costs less than the compact form by what
** 's->optimize' minimises: 1 (t->sx, sy, sm, n, frac 8, yoff, narrow, chained set), otherwise
** 0 and 't' untouched. */
int bgi_lut_chained_try(const bg_lut_spec *s, bg_lut *t, const bgi_band *band);

/* The chained form's lookup at a code inside the range, with the emitted walk's arithmetic
** (16-bit state, the slope split in bytes). */
int32_t bgi_lut_chain_eval(const bg_lut *t, long code);

/* The chained form's start state (whole counts, 2^-8 fraction) and segment i's stored bytes:
** its length, the slope's high byte (signed) and low byte. */
void bgi_lut_chain_start(const bg_lut *t, int32_t *whole, unsigned *frac);
void bgi_lut_chain_bytes(const bg_lut *t, size_t i, unsigned *len, int *mh, unsigned *ml);

/* The mean count of segments the chained walk visits per code of the range (lut_chain.c). */
double bgi_lut_chain_steps(const bg_lut *t);

/* Whether a uniform table's interpolation fits 16-bit arithmetic (the AVR form); lut_target.c */
int bgi_lut_uniform16(const bg_lut *t);

/* What the automatic choice minimises for spec 's' (its target and optimize): table bytes on
** the host, otherwise the target's flash, time or weighted sum (lut_target.c). */
double bgi_lut_choice_cost(const bg_lut_spec *s, const bg_lut *t);

#endif
