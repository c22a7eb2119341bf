/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Self-contained HTML reports: one file, inline CSS and SVG, no scripts, and a content
** security policy that forbids every request, so the file cannot reach the network.  The
** layout is neutral and readable in greyscale; printing fits A4 and Letter (the content is
** 180 mm wide, narrower than both, and figures and tables do not break across pages).
** Numbers shown rounded carry their full value in a data-v attribute. */
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <string.h>

#include "bandgap/bandgap.h"
#include "report/html_int.h"

/* s[0..n) as HTML text: the five markup characters as references; a byte that does not start
** valid UTF-8 and a character no text field may hold (bg_text_forbidden: controls, bidirectional
** overrides) as U+FFFD, so stored text can neither add markup nor reorder what is shown. */
static void esc_n(FILE *f, const char *s, size_t n)
{
    const unsigned char *p = (const unsigned char *)s;
    for (size_t i = 0; i < n;) {
        uint32_t cp;
        size_t len = bg_utf8_decode(p + i, n - i, &cp);
        if (len == 0 || (bg_text_forbidden(cp) && cp != '\n')) {
            fputs("\xef\xbf\xbd", f);
            i += len ? len : 1;
            continue;
        }
        switch (cp) {
        case '<': fputs("&lt;", f); break;
        case '>': fputs("&gt;", f); break;
        case '&': fputs("&amp;", f); break;
        case '"': fputs("&quot;", f); break;
        case '\'': fputs("&#39;", f); break;
        default: fwrite(p + i, 1, len, f);
        }
        i += len;
    }
}

void bgi_html_esc(FILE *f, const char *s)
{
    if (s)
        esc_n(f, s, strlen(s));
}

/* Text as a CSS string's content: quotes, backslashes and '<' (so no "</style>") escaped. */
static void css_string(FILE *f, const char *s)
{
    fputc('"', f);
    for (; s && *s; s++) {
        if (*s == '"' || *s == '\\' || *s == '<' || (unsigned char)*s < 0x20)
            fprintf(f, "\\%x ", (unsigned)(unsigned char)*s);
        else
            fputc(*s, f);
    }
    fputc('"', f);
}

/* The printed page: the title and the report's identifier at the top of every page and "page
** n of m" at the bottom, in the page's margin boxes (CSS Paged Media 3, section 5; the
** counters 'page' and 'pages', section 4.3). */
static void page_css(FILE *f, const char *title, const char *report_id)
{
    static const char box[] = " font: 8pt 'DejaVu Sans', Helvetica, Arial, sans-serif; "
                              "color: #333; }\n";
    fputs("@page { margin: 16mm 15mm;\n  @top-left { content: ", f);
    css_string(f, title);
    fputs(";", f);
    fputs(box, f);
    fputs("  @top-right { content: ", f);
    css_string(f, report_id);
    fputs(";", f);
    fputs(box, f);
    fputs("  @bottom-right { content: \"page \" counter(page) \" of \" counter(pages);", f);
    fputs(box, f);
    fputs("}\n", f);
}

void bgi_html_begin(FILE *f, const char *title, const char *report_id)
{
    fputs("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\"/>\n"
          "<meta http-equiv=\"Content-Security-Policy\" content=\"default-src 'none'; "
          "style-src 'unsafe-inline'; img-src data:\"/>\n"
          "<meta name=\"generator\" content=\"bandgap\"/>\n<title>", f);
    bgi_html_esc(f, title);
    fputs(" ", f);
    bgi_html_esc(f, report_id);
    fputs("</title>\n<style>\n", f);
    page_css(f, title, report_id);
    fputs("body { font: 10pt/1.35 'DejaVu Sans', Helvetica, Arial, sans-serif; color: #111;"
          " max-width: 180mm; margin: 8mm auto; }\n"
          "h1 { font-size: 16pt; margin: 0 0 2mm; border-bottom: 1.5pt solid #111; }\n"
          "h2 { font-size: 11.5pt; margin: 6mm 0 2mm; border-bottom: 0.5pt solid #777;"
          " break-after: avoid; }\n"
          "table { border-collapse: collapse; margin: 1mm 0 3mm; break-inside: avoid; }\n"
          "td, th { padding: 0.6mm 2.5mm; text-align: left; vertical-align: top; }\n"
          "table.data td, table.data th { border-bottom: 0.4pt solid #bbb; }\n"
          "table.data td.n, table.data th.n { text-align: right;"
          " font-variant-numeric: tabular-nums; }\n"
          "table.kv th { font-weight: normal; color: #444; width: 45mm; }\n"
          "table.data td:first-child { white-space: nowrap; }\n"
          "tr.excluded td { color: #777; text-decoration: line-through; }\n"
          "tr.flag td { font-weight: bold; }\n"
          "figure { margin: 2mm 0 4mm; break-inside: avoid; }\n"
          "figcaption { font-size: 9pt; color: #333; }\n"
          ".caution { border: 1pt solid #111; padding: 2mm 3mm; margin: 5mm 0; "
          "break-inside: avoid; }\n"
          ".closing { break-inside: avoid; }\n"
          ".meta { color: #444; font-size: 9pt; }\n"
          "svg text { font: 7.5pt 'DejaVu Sans', Helvetica, Arial, sans-serif; fill: #111; }\n"
          "</style>\n</head>\n<body>\n", f);
}

void bgi_html_end(FILE *f)
{
    fputs("</body>\n</html>\n", f);
}

/* The page's end: the last section, the cautions and the closing note in one block that is
** not broken across pages, so that no printed page holds only the end (a break before a
** block is avoided only as far as the browser can; a block kept whole is kept whole). */
void bgi_html_closing_begin(FILE *f)
{
    fputs("<div class=\"closing\">\n", f);
}

void bgi_html_closing_end(FILE *f, const char *note)
{
    bgi_html_cautions(f);
    if (note && *note) {
        fputs("<p class=\"meta\" id=\"closing-note\">", f);
        bgi_html_esc(f, note);
        fputs("</p>\n", f);
    }
    fputs("</div>\n", f);
}

void bgi_html_cautions(FILE *f)
{
    fputs("<div class=\"caution\" id=\"cautions\"><strong>Cautions.</strong> These results hold "
          "only inside the calibrated range and within the stated uncertainty; outside the "
          "range the curve is an extrapolation and no uncertainty is claimed. This report is "
          "not an accredited calibration certificate unless the laboratory's own accredited "
          "procedure issues it. In medical, food-safety or process-safety use, follow local "
          "regulations and accredited practice.</div>\n", f);
}

/* Text from the library, escaped, with its ASCII unit words as a reader expects them:
** "degC" as the degree Celsius sign and "ohm" as the ohm sign (SI Brochure, 9th ed., table 4). */
void bgi_html_esc_units(FILE *f, const char *s)
{
    char prev = ' ';
    while (s && *s) {
        int alone = !((prev >= 'a' && prev <= 'z') || (prev >= 'A' && prev <= 'Z'));
        if (alone && strncmp(s, "degC", 4) == 0) {
            fputs("\xc2\xb0" "C", f);
            s += 4, prev = 'C';
        } else if (alone && strncmp(s, "ohm", 3) == 0 && !(s[3] >= 'a' && s[3] <= 'z')) {
            fputs("\xce\xa9", f);
            s += 3, prev = 'm';
        } else {
            size_t n = 1;
            while (s[n] && s[n] != 'd' && s[n] != 'o')
                n++;
            esc_n(f, s, n);
            prev = s[n - 1];
            s += n;
        }
    }
}

/* A coefficient: one scientific format for all, 10 significant digits (BGI_HTML_COEF_DIGITS),
** with the full value in data-v. */
void bgi_html_coef(FILE *f, const char *tag, const char *cls, double v)
{
    bgi_html_num(f, tag, cls, "%.9e", v);
}

/* 'v' (finite) with 'prec' decimals (0 .. 9), exactly as printf's "%.*f" writes it ('plus':
** "%+.*f", a sign always), into 'buf' (40 bytes): 1, or 0 where this cannot be sure and
** printf must write it.  x = |v| 10^prec is computed with one rounding (10^prec is exact), so
** below 2^40 it is within 2^-13 of the exact product; the nearest integer to the exact
** product is then the nearest to x unless x lies within 1e-3 of a tie, which is left to
** printf.  The sign is written as printf writes it, for -0.000 too.  A report of a large lot
** writes millions of these, and printf's exact conversion was a quarter of its time. */
static int fixed(char *buf, double v, int prec, int plus)
{
    static const double p10[10] = { 1, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9 };
    double x = fabs(v) * p10[prec], r = floor(x), frac = x - r;
    if (!(x < 1099511627776.0) || fabs(frac - 0.5) < 1e-3) /* 2^40 */
        return 0;
    uint64_t n = (uint64_t)r + (frac > 0.5);
    char digits[24];
    int nd = 0;
    do
        digits[nd++] = (char)('0' + n % 10), n /= 10;
    while (n);
    while (nd <= prec) /* at least one digit before the point */
        digits[nd++] = '0';
    char *o = buf;
    if (signbit(v))
        *o++ = '-';
    else if (plus)
        *o++ = '+';
    while (nd > prec)
        *o++ = digits[--nd];
    if (prec)
        *o++ = '.';
    while (nd > 0)
        *o++ = digits[--nd];
    *o = '\0';
    return 1;
}

/* 'v' as 'fmt' (one printf conversion of a double) writes it: "%.Nf" and "%+.Nf" through
** fixed() where it is sure, anything else by printf itself. */
static void shown(FILE *f, const char *fmt, double v)
{
    char buf[40];
    int plus = fmt[1] == '+', k = 1 + plus;
    if (fmt[0] == '%' && fmt[k] == '.' && fmt[k + 1] >= '0' && fmt[k + 1] <= '9' &&
        fmt[k + 2] == 'f' && fmt[k + 3] == '\0' && fixed(buf, v, fmt[k + 1] - '0', plus))
        fputs(buf, f);
    else
        fprintf(f, fmt, v);
}

/* A number to show, with its full value in data-v: the shortest decimal that reads back to
** the same double (bg_num_shortest, as the JSON output writes numbers). */
void bgi_html_num(FILE *f, const char *tag, const char *cls, const char *fmt, double v)
{
    char full[BG_NUM_SHORTEST];
    fputc('<', f);
    fputs(tag, f);
    if (cls) {
        fputs(" class=\"", f);
        fputs(cls, f);
        fputc('"', f);
    }
    fputs(" data-v=\"", f);
    fputs(bg_num_shortest(full, sizeof full, v), f);
    fputs("\">", f);
    if (isfinite(v))
        shown(f, fmt, v);
    else
        fputs("&#8212;", f);
    fputs("</", f);
    fputs(tag, f);
    fputc('>', f);
}

/* Round up to two significant digits (common practice for expanded uncertainties, GUM
** 7.2.6 allows at most two). */
double bgi_html_round_up2(double v)
{
    if (!(v > 0.0) || !isfinite(v))
        return v;
    double e = floor(log10(v)) - 1.0, s = pow(10.0, e);
    double r = ceil(v / s * (1.0 - 1e-12)) * s;
    return r;
}

/* A value already rounded to two significant digits, printed with them ("3.0", "12"). */
void bgi_html_sig2(FILE *f, const char *cls, double v)
{
    int dec = isfinite(v) && v > 0.0 ? 1 - (int)floor(log10(v) + 1e-9) : 0;
    fprintf(f, "<span class=\"%s\" data-v=\"%.17g\">%.*f</span>", cls, v, dec < 0 ? 0 : dec, v);
}

/* ---- SVG charts ---- */

/* Axis limits and a "nice" tick step (1, 2 or 5 times a power of ten). */
static void nice(double lo, double hi, double *a, double *b, double *step, int integer)
{
    if (!(hi > lo)) {
        double d = fabs(lo) > 0 ? fabs(lo) * 0.1 : 1.0;
        lo -= d, hi += d;
    }
    double raw = (hi - lo) / 5.0, p = pow(10.0, floor(log10(raw))), m = raw / p;
    *step = (m < 1.5 ? 1.0 : m < 3.5 ? 2.0 : m < 7.5 ? 5.0 : 10.0) * p;
    if (integer && *step < 1.0)
        *step = 1.0;
    /* a value a hair past a tick (a reading at -20.02 degC) does not add a whole step */
    *a = floor(lo / *step + 0.01) * *step;
    *b = ceil(hi / *step - 0.01) * *step;
    if (integer)
        *a = lo, *b = hi;
}

enum { W = 640, H = 300, ML = 62, MR = 14, MT = 12, MB = 40, MAXTICK = 64 };

static double sx(const bgi_html_chart *c, double x)
{
    return ML + (x - c->x0) / (c->x1 - c->x0) * (W - ML - MR);
}

static double sy(const bgi_html_chart *c, double y)
{
    return H - MB - (y - c->y0) / (c->y1 - c->y0) * (H - MT - MB);
}

static void chart_begin(FILE *f, bgi_html_chart *c, double xlo, double xhi, double ylo,
                        double yhi, const char *const *names, size_t nnames)
{
    double xs, ys;
    nice(xlo, xhi, &c->x0, &c->x1, &xs, c->xint);
    nice(ylo, yhi, &c->y0, &c->y1, &ys, 0);
    fprintf(f, "<figure>\n<svg xmlns=\"http://www.w3.org/2000/svg\" data-chart=\"%s\" "
               "viewBox=\"0 0 %d %d\" width=\"100%%\" role=\"img\" aria-label=\"", c->id, W, H);
    bgi_html_esc(f, c->title);
    fprintf(f, "\">\n<rect x=\"%d\" y=\"%d\" width=\"%d\" height=\"%d\" fill=\"none\" "
               "stroke=\"#111\" stroke-width=\"0.8\"/>\n", ML, MT, W - ML - MR, H - MT - MB);
    /* At most MAXTICK ticks an axis: with limits that are huge or not finite (a damaged
    ** record's values) a step can be lost in rounding, and the loop would never end. */
    int k = 0;
    for (double v = c->xint ? ceil(c->x0) : c->x0; v <= c->x1 + xs * 1e-9 && k < MAXTICK;
         v += xs, k++) {
        double X = sx(c, v);
        fprintf(f, "<line x1=\"%.2f\" y1=\"%d\" x2=\"%.2f\" y2=\"%d\" stroke=\"#ccc\" "
                   "stroke-width=\"0.5\"/><text x=\"%.2f\" y=\"%d\" text-anchor=\"middle\">",
                X, MT, X, H - MB, X, H - MB + 12);
        if (names && c->xint && v >= 1.0 && v < (double)nnames + 0.5)
            bgi_html_esc(f, names[(size_t)v - 1]); /* tick v names item v - 1 */
        else
            fprintf(f, "%g", fabs(v) < xs * 1e-9 ? 0.0 : v);
        fputs("</text>\n", f);
    }
    k = 0;
    for (double v = c->y0; v <= c->y1 + ys * 1e-9 && k < MAXTICK; v += ys, k++) {
        double Y = sy(c, v);
        fprintf(f, "<line x1=\"%d\" y1=\"%.2f\" x2=\"%d\" y2=\"%.2f\" stroke=\"#ccc\" "
                   "stroke-width=\"0.5\"/><text x=\"%d\" y=\"%.2f\" text-anchor=\"end\">%g"
                   "</text>\n", ML, Y, W - MR, Y, ML - 4, Y + 3, fabs(v) < ys * 1e-9 ? 0.0 : v);
    }
    fprintf(f, "<text x=\"%d\" y=\"%d\" text-anchor=\"middle\">", (W + ML - MR) / 2, H - 8);
    bgi_html_esc(f, c->xlabel);
    fprintf(f, "</text>\n<text transform=\"translate(14 %d) rotate(-90)\" "
               "text-anchor=\"middle\">", (H - MB + MT) / 2);
    bgi_html_esc(f, c->ylabel);
    fputs("</text>\n", f);
}

void bgi_html_chart_begin(FILE *f, bgi_html_chart *c, double xlo, double xhi, double ylo, double yhi)
{
    chart_begin(f, c, xlo, xhi, ylo, yhi, NULL, 0);
}

void bgi_html_chart_begin_named(FILE *f, bgi_html_chart *c, const char *const *names, size_t n,
                                double ylo, double yhi)
{
    c->xint = 1;
    chart_begin(f, c, 0.5, (double)n + 0.5, ylo, yhi, names, n);
}

void bgi_html_chart_band(FILE *f, const bgi_html_chart *c, const double *x, const double *lo,
                     const double *hi, size_t n)
{
    fputs("<polygon class=\"band\" fill=\"#ddd\" stroke=\"#888\" stroke-width=\"0.5\" "
          "stroke-dasharray=\"3 2\" points=\"", f);
    for (size_t i = 0; i < n; i++)
        fprintf(f, "%.2f,%.2f ", sx(c, x[i]), sy(c, hi[i]));
    for (size_t i = n; i-- > 0;)
        fprintf(f, "%.2f,%.2f ", sx(c, x[i]), sy(c, lo[i]));
    fputs("\"/>\n", f);
}

void bgi_html_chart_hline(FILE *f, const bgi_html_chart *c, double y, const char *label, int dashed)
{
    fprintf(f, "<line class=\"limit\" data-v=\"%.17g\" x1=\"%d\" y1=\"%.2f\" x2=\"%d\" "
               "y2=\"%.2f\" stroke=\"#111\" stroke-width=\"0.8\"%s/>", y, ML, sy(c, y), W - MR,
            sy(c, y), dashed ? " stroke-dasharray=\"5 3\"" : "");
    if (label) {
        fprintf(f, "<text x=\"%d\" y=\"%.2f\" text-anchor=\"end\">", W - MR - 3, sy(c, y) - 3);
        bgi_html_esc(f, label);
        fputs("</text>", f);
    }
    fputs("\n", f);
}

void bgi_html_chart_line(FILE *f, const bgi_html_chart *c, const double *x, const double *y, size_t n)
{
    fprintf(f, "<polyline class=\"series\" data-n=\"%zu\" fill=\"none\" stroke=\"#111\" "
               "stroke-width=\"0.9\" points=\"", n);
    for (size_t i = 0; i < n; i++)
        fprintf(f, "%.2f,%.2f ", sx(c, x[i]), sy(c, y[i]));
    fputs("\"/>\n", f);
}

void bgi_html_chart_envelope(FILE *f, const bgi_html_chart *c, const double *x0,
                             const double *x1, const double *lo, const double *hi, size_t n)
{
    fprintf(f, "<polygon class=\"envelope\" data-bands=\"%zu\" fill=\"#888\" stroke=\"#222\" "
               "stroke-width=\"0.4\" stroke-linejoin=\"round\" points=\"", n);
    for (size_t i = 0; i < n; i++)
        fprintf(f, "%.2f,%.2f %.2f,%.2f ", sx(c, x0[i]), sy(c, hi[i]), sx(c, x1[i]),
                sy(c, hi[i]));
    for (size_t i = n; i-- > 0;)
        fprintf(f, "%.2f,%.2f %.2f,%.2f ", sx(c, x1[i]), sy(c, lo[i]), sx(c, x0[i]),
                sy(c, lo[i]));
    fputs("\"/>\n", f);
}

/* Points: circles, or open squares where 'flag' is set (e.g. excluded or out of control). */
void bgi_html_chart_points(FILE *f, const bgi_html_chart *c, const double *x, const double *y,
                       const int *flag, size_t n)
{
    for (size_t i = 0; i < n; i++) {
        double X = sx(c, x[i]), Y = sy(c, y[i]);
        if (flag && flag[i])
            fprintf(f, "<rect class=\"pt flag\" data-x=\"%.17g\" data-y=\"%.17g\" x=\"%.2f\" "
                       "y=\"%.2f\" width=\"6\" height=\"6\" fill=\"#fff\" stroke=\"#111\"/>\n",
                    x[i], y[i], X - 3, Y - 3);
        else
            fprintf(f, "<circle class=\"pt\" data-x=\"%.17g\" data-y=\"%.17g\" cx=\"%.2f\" "
                       "cy=\"%.2f\" r=\"2.6\" fill=\"#111\"/>\n", x[i], y[i], X, Y);
    }
}

/* Histogram bars from 'edges' (n + 1) and 'count' (n). */
void bgi_html_chart_bars(FILE *f, const bgi_html_chart *c, const double *edges, const size_t *count,
                     size_t n)
{
    for (size_t i = 0; i < n; i++) {
        double X0 = sx(c, edges[i]), X1 = sx(c, edges[i + 1]), Y = sy(c, (double)count[i]);
        fprintf(f, "<rect class=\"bar\" data-count=\"%zu\" data-lo=\"%.17g\" data-hi=\"%.17g\" "
                   "x=\"%.2f\" y=\"%.2f\" width=\"%.2f\" height=\"%.2f\" fill=\"#999\" "
                   "stroke=\"#111\" stroke-width=\"0.6\"/>\n", count[i], edges[i], edges[i + 1],
                X0, Y, X1 - X0, sy(c, 0.0) - Y);
    }
}

void bgi_html_chart_end(FILE *f, const bgi_html_chart *c, const char *caption)
{
    fputs("</svg>\n<figcaption>", f);
    bgi_html_esc(f, c->title);
    if (caption && *caption) {
        fputs(". ", f);
        bgi_html_esc(f, caption);
    }
    fputs("</figcaption>\n</figure>\n", f);
}
