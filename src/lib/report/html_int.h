/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Internal to the report module: the HTML page frame, escaping, numbers and inline SVG charts
** that every report generator shares (src/lib/report/html.c). */
#ifndef BANDGAP_REPORT_HTML_INT_H
#define BANDGAP_REPORT_HTML_INT_H

#include <stddef.h>
#include <stdio.h>

void bgi_html_esc(FILE *f, const char *s);
void bgi_html_begin(FILE *f, const char *title, const char *report_id);
void bgi_html_end(FILE *f);
void bgi_html_cautions(FILE *f);
/* The end of the page, kept on one printed page: begin before the last section, end with
** the cautions and 'note' (plain text, may be NULL). */
void bgi_html_closing_begin(FILE *f);
void bgi_html_closing_end(FILE *f, const char *note);
/* <tag class="cls" data-v="FULL">SHOWN</tag>: FULL the shortest decimal that reads back to
** 'v' (bg_num_shortest), SHOWN 'v' as printf's 'fmt' (one conversion) writes it, or an em
** dash when 'v' is not finite. */
void bgi_html_num(FILE *f, const char *tag, const char *cls, const char *fmt,
                  double v);
/* Escaped text with "degC" and "ohm" written as the degree Celsius and ohm signs. */
void bgi_html_esc_units(FILE *f, const char *s);
/* Coefficients: "%.9e", i.e. this many significant digits, in every report. */
enum { BGI_HTML_COEF_DIGITS = 10 };
void bgi_html_coef(FILE *f, const char *tag, const char *cls, double v);
double bgi_html_round_up2(double v);
void bgi_html_sig2(FILE *f, const char *cls, double v);
typedef struct bgi_html_chart {
  const char *id, *title, *xlabel, *ylabel;
  int xint;              /* x is an index: integer ticks */
  double x0, x1, y0, y1; /* axis limits, set by bgi_html_chart_begin */
} bgi_html_chart;
void bgi_html_chart_begin(FILE *f, bgi_html_chart *c, double xlo, double xhi,
                          double ylo, double yhi);
/* The same with the x axis the items 1 .. n, each tick labelled with its name (lot codes). */
void bgi_html_chart_begin_named(FILE *f, bgi_html_chart *c, const char *const *names, size_t n,
                                double ylo, double yhi);
void bgi_html_chart_band(FILE *f, const bgi_html_chart *c, const double *x,
                         const double *lo, const double *hi, size_t n);
void bgi_html_chart_hline(FILE *f, const bgi_html_chart *c, double y,
                          const char *label, int dashed);
void bgi_html_chart_line(FILE *f, const bgi_html_chart *c, const double *x,
                         const double *y, size_t n);
/* A min/max envelope: band i spans x from 'x0[i]' to 'x1[i]' and y from 'lo[i]' to 'hi[i]';
** one filled polygon (class "envelope", data-bands = n) whose outline is drawn even where a
** band is a single value. */
void bgi_html_chart_envelope(FILE *f, const bgi_html_chart *c, const double *x0,
                             const double *x1, const double *lo, const double *hi, size_t n);
void bgi_html_chart_points(FILE *f, const bgi_html_chart *c, const double *x,
                           const double *y, const int *flag, size_t n);
void bgi_html_chart_bars(FILE *f, const bgi_html_chart *c, const double *edges,
                         const size_t *count, size_t n);
void bgi_html_chart_end(FILE *f, const bgi_html_chart *c, const char *caption);

#endif
