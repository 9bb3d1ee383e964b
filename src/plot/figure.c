/* figure.c — the figure API (figure.h): a grid of panels (lines, scatter with density,
 * PPI plan view, RHI range–height cut) drawn with PLplot's cairo drivers into one PNG,
 * SVG or PDF file.
 *
 * Method (docs/method.md §11):
 *   - One figure = one fresh PLplot stream (plmkstrm, plinit ... plend1), one page, drawn
 *     to a FILE* of ours (figfile.c) that is checked and renamed when PLplot has closed it.
 *   - Layout first, drawing second: every panel's viewport, ticks, legend place and colour
 *     bar are computed (pure arithmetic in page millimetres, 1 px = 1 pt = 25.4/72 mm on
 *     the cairo devices) before PLplot is started, so a figure that does not fit is
 *     refused without touching a file. Panels are placed with plsvpa after one pladv(0),
 *     never with plssub; colour bars are drawn here (an image strip and our own ticks), not
 *     with plcolorbar.
 *   - Ticks and tick labels are ours (rp_figure_axis_ticks): drawn with pljoin and plmtex,
 *     so one label style holds per axis and the label widths are known for the margins.
 *   - Axis ranges follow the data (rp_figure_axis_range): 4 % padding, no rounding out to
 *     decades.
 *   - Series colours: Okabe & Ito (2008) palette, a marker glyph per series. Field colour
 *     maps: viridis (van der Walt & Smith 2015; 10 anchors, linear in sRGB) and a diverging
 *     map linear in CIELAB between L*a*b* = (40, 17, -52) blue, (88, 0, 0) grey and
 *     (40, 45, 31.5) red, converted with the CIE 15:2004 L*a*b* inverse (D65) and the
 *     IEC 61966-2-1 sRGB matrix and transfer function.
 *   - Fields (PPI, RHI, scatter density) are drawn with plimagefr on a grid of cell
 *     corners (pltr1/pltr2); NaN cells get a value below the plotted range, which
 *     plimagefr leaves undrawn.
 * Invariants: never prints; PLplot's plabort messages are silenced during a figure and the
 * default handler restored after; conditions under which PLplot would exit (no file) or
 * ask on stdin (unknown device) are checked before plinit. Not re-entrant (PLplot). */
#include "rainprint/figure.h"

#include <limits.h>
#include <math.h>
#include <plplot.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "figfile.h"

#define CMAP_N 256
#ifndef M_PI
#define M_PI 3.14159265358979323846
#endif

/* cmap0 indices used by the figures. */
enum {
  COL_BG = 0,
  COL_FG = 1,
  COL_GRID = 2,
  COL_GUIDE = 3,
  COL_DENSITY = 4,
  COL_SERIES0 = 5,
  N_SERIES_COLOURS = 8,
  N_COL0 = COL_SERIES0 + N_SERIES_COLOURS
};

/* Okabe & Ito (2008), "Color Universal Design", the eight-colour set, reordered so that
 * the first three (one line per radar band) are the most distinct; yellow (faint) last. */
static const unsigned char SERIES_RGB[N_SERIES_COLOURS][3] = {
    {0x00, 0x72, 0xB2}, {0xD5, 0x5E, 0x00}, {0x00, 0x9E, 0x73}, {0xCC, 0x79, 0xA7},
    {0xE6, 0x9F, 0x00}, {0x56, 0xB4, 0xE9}, {0x00, 0x00, 0x00}, {0xF0, 0xE4, 0x42}};

static const double MARKER_SCALE = 0.6; /* marker size relative to the text height */
static const char *const MARKERS[] = {"●", "■", "▲", "◆", "▼", "★"};
#define N_MARKERS (sizeof MARKERS / sizeof MARKERS[0])

/* Viridis sampled at 10 evenly spaced points (van der Walt & Smith 2015; values from
 * memory, matching matplotlib's table). */
static const unsigned char VIRIDIS_ANCHORS[10][3] = {
    {0x44, 0x01, 0x54}, {0x48, 0x28, 0x78}, {0x3E, 0x4A, 0x89}, {0x31, 0x68, 0x8E},
    {0x26, 0x82, 0x8E}, {0x1F, 0x9E, 0x89}, {0x35, 0xB7, 0x79}, {0x6D, 0xCD, 0x59},
    {0xB4, 0xDE, 0x2C}, {0xFD, 0xE7, 0x25}};

/* Diverging anchors in CIE L*a*b* (D65): blue, light grey, red; both ends L* = 40 and
 * chroma about 55 (symmetric arms); the centre is grey, not white, so that it cannot be
 * mistaken for a blank NaN cell. All 256 entries are inside the sRGB gamut. */
static const double DIVERGING_LAB[3][3] = {
    {40.0, 17.0, -52.0}, {88.0, 0.0, 0.0}, {40.0, 45.0, 31.5}};

/* ---------------------------------------------------------------- colour maps */

static double srgb_encode(double c) {
  if (c <= 0.0) return 0.0;
  if (c >= 1.0) return 1.0;
  return c <= 0.0031308 ? 12.92 * c : 1.055 * pow(c, 1.0 / 2.4) - 0.055;
}

static void lab_to_srgb(const double lab[3], double rgb[3]) {
  const double xn = 0.95047, yn = 1.0, zn = 1.08883; /* D65 white, 2° observer */
  const double delta = 6.0 / 29.0;
  double fy = (lab[0] + 16.0) / 116.0;
  double f[3] = {fy + lab[1] / 500.0, fy, fy - lab[2] / 200.0};
  double t[3];
  for (int i = 0; i < 3; i++)
    t[i] = f[i] > delta ? f[i] * f[i] * f[i] : 3.0 * delta * delta * (f[i] - 4.0 / 29.0);
  double x = xn * t[0], y = yn * t[1], z = zn * t[2];
  rgb[0] = srgb_encode(3.2406 * x - 1.5372 * y - 0.4986 * z);
  rgb[1] = srgb_encode(-0.9689 * x + 1.8758 * y + 0.0415 * z);
  rgb[2] = srgb_encode(0.0557 * x - 0.2040 * y + 1.0570 * z);
}

static void cmap_entry(int colormap, int k, double rgb[3]) {
  double t = (double)k / (double)(CMAP_N - 1);
  if (colormap == RP_FIGURE_CMAP_VIRIDIS) {
    double s = t * 9.0;
    int i = (int)floor(s);
    if (i > 8) i = 8;
    double w = s - (double)i;
    for (int c = 0; c < 3; c++)
      rgb[c] = ((1.0 - w) * VIRIDIS_ANCHORS[i][c] + w * VIRIDIS_ANCHORS[i + 1][c]) / 255.0;
  } else {
    const double *a = t < 0.5 ? DIVERGING_LAB[0] : DIVERGING_LAB[1];
    const double *b = t < 0.5 ? DIVERGING_LAB[1] : DIVERGING_LAB[2];
    double w = t < 0.5 ? 2.0 * t : 2.0 * t - 1.0;
    double lab[3];
    for (int c = 0; c < 3; c++) lab[c] = a[c] + w * (b[c] - a[c]);
    lab_to_srgb(lab, rgb);
  }
}

static unsigned char to_byte(double v) {
  long q = lround(v * 255.0);
  if (q < 0) q = 0;
  if (q > 255) q = 255;
  return (unsigned char)q;
}

static int cmap_ok(int colormap) {
  return colormap == RP_FIGURE_CMAP_VIRIDIS || colormap == RP_FIGURE_CMAP_DIVERGING;
}

rp_status rp_figure_colormap_rgb(int colormap, double t, unsigned char rgb[3],
                                 rp_error *err) {
  if (!cmap_ok(colormap))
    return rp_error_set(err, RP_EINVAL, "colour map %d is not 0 (sequential) or 1 (diverging)",
                        colormap);
  if (rgb == NULL) return rp_error_set(err, RP_EINVAL, "colour map: rgb output is NULL");
  if (!(t >= 0.0 && t <= 1.0))
    return rp_error_set(err, RP_EINVAL, "colour map position t = %g outside [0, 1]", t);
  double c[3];
  cmap_entry(colormap, (int)lround(t * (CMAP_N - 1)), c);
  for (int i = 0; i < 3; i++) rgb[i] = to_byte(c[i]);
  return RP_OK;
}

/* ------------------------------------------------------- axis ranges and ticks */

rp_status rp_figure_axis_range(double data_lo, double data_hi, int is_log, double *lo,
                               double *hi, rp_error *err) {
  if (lo == NULL || hi == NULL) return rp_error_set(err, RP_EINVAL, "axis range: NULL output");
  if (isinf(data_lo) || isinf(data_hi))
    return rp_error_set(err, RP_EINVAL, "axis range: data [%g, %g] is infinite", data_lo,
                        data_hi);
  if (isnan(data_lo) || isnan(data_hi)) {
    *lo = is_log ? 1.0 : 0.0;
    *hi = is_log ? 10.0 : 1.0;
    return RP_OK;
  }
  if (data_lo > data_hi)
    return rp_error_set(err, RP_EINVAL, "axis range: data_lo = %g is above data_hi = %g",
                        data_lo, data_hi);
  if (is_log && !(data_lo > 0.0))
    return rp_error_set(err, RP_EINVAL, "axis range: %g is not > 0 on a log axis", data_lo);
  double a = is_log ? log10(data_lo) : data_lo, b = is_log ? log10(data_hi) : data_hi;
  if (b - a <= 1e-12 * fmax(1.0, fabs(b))) {
    double d = is_log ? 0.1 : (a != 0.0 ? 0.1 * fabs(a) : 1.0);
    a -= d;
    b += d;
  }
  double pad = 0.04 * (b - a);
  a -= pad;
  b += pad;
  *lo = is_log ? pow(10.0, a) : a;
  *hi = is_log ? pow(10.0, b) : b;
  return RP_OK;
}

/* Count of multiples of step in [lo, hi]. */
static double multiples_in(double lo, double hi, double step) {
  return floor(hi / step + 1e-9) - ceil(lo / step - 1e-9) + 1.0;
}

/* Decimals needed to write v exactly (at most 6). */
static int decimals_of(double v) {
  for (int d = 0; d <= 6; d++) {
    double s = v * pow(10.0, d);
    if (fabs(s - round(s)) <= 1e-6 * fmax(1.0, fabs(s))) return d;
  }
  return 7;
}

/* Linear ticks: the smallest step of 1, 2, 2.5 or 5 x 10^k with at most max_ticks
 * multiples in [lo, hi]; when that leaves fewer than 2, the two ends rounded inwards to a
 * tenth of the span's decade. */
static size_t linear_ticks(double lo, double hi, int max_ticks, double *v, double *step) {
  static const double m[] = {1.0, 2.0, 2.5, 5.0};
  double e = pow(10.0, floor(log10((hi - lo) / (double)max_ticks)) - 1.0);
  double s = 0.0;
  for (int it = 0; it < 40 && s == 0.0; it++, e *= 10.0)
    for (int i = 0; i < 4; i++)
      if (multiples_in(lo, hi, m[i] * e) <= (double)max_ticks) { s = m[i] * e; break; }
  size_t n = 0;
  if (s > 0.0 && multiples_in(lo, hi, s) >= 2.0) {
    double first = ceil(lo / s - 1e-9) * s;
    for (int k = 0; k < RP_FIGURE_MAX_TICKS && n < RP_FIGURE_MAX_TICKS; k++) {
      double x = first + k * s;
      if (x > hi + 1e-9 * s) break;
      if (fabs(x) < 1e-9 * s) x = 0.0; /* no "-0" */
      v[n++] = x;
    }
  } else {
    s = pow(10.0, floor(log10(hi - lo)) - 1.0);
    v[0] = ceil(lo / s - 1e-9) * s;
    v[1] = floor(hi / s + 1e-9) * s;
    n = 2;
  }
  *step = s;
  return n;
}

/* Log ticks at m x 10^k for the mantissas in ms[]; returns the count (may exceed cap:
 * then the values are not all stored). */
static size_t mantissa_ticks(double lo, double hi, const int *ms, int nm, double *v,
                             size_t cap) {
  size_t n = 0;
  for (double k = floor(log10(lo)) - 1.0; k <= floor(log10(hi)) + 1.0; k += 1.0) {
    for (int i = 0; i < nm; i++) {
      double x = ms[i] * pow(10.0, k);
      if (x < lo * (1.0 - 1e-12) || x > hi * (1.0 + 1e-12)) continue;
      if (n < cap) v[n] = x;
      n++;
    }
  }
  return n;
}

static size_t decade_ticks(double lo, double hi, int max_ticks, double *v) {
  double k0 = ceil(log10(lo) - 1e-9), k1 = floor(log10(hi) + 1e-9);
  long s = 1;
  while (floor(k1 / (double)s) - ceil(k0 / (double)s) + 1.0 > (double)max_ticks) s++;
  size_t n = 0;
  for (double k = ceil(k0 / (double)s) * (double)s; k <= k1 && n < RP_FIGURE_MAX_TICKS;
       k += (double)s)
    v[n++] = pow(10.0, k);
  return n;
}

rp_status rp_figure_axis_ticks(double lo, double hi, int is_log, int max_ticks,
                               rp_figure_ticks *out, rp_error *err) {
  if (out == NULL) return rp_error_set(err, RP_EINVAL, "axis ticks: NULL output");
  if (!isfinite(lo) || !isfinite(hi) || !(lo < hi))
    return rp_error_set(err, RP_EINVAL, "axis ticks: range [%g, %g] is not finite and increasing",
                        lo, hi);
  if (is_log && !(lo > 0.0))
    return rp_error_set(err, RP_EINVAL, "axis ticks: lo = %g is not > 0 on a log axis", lo);
  if (max_ticks < 2 || max_ticks > RP_FIGURE_MAX_TICKS)
    return rp_error_set(err, RP_EINVAL, "axis ticks: max_ticks = %d outside [2, %d]",
                        max_ticks, RP_FIGURE_MAX_TICKS);
  memset(out, 0, sizeof *out);
  double *v = out->value;
  int common_decimals = 1; /* linear steps: one number of decimals for all labels */
  double step = 0.0;
  if (!is_log) {
    out->n = linear_ticks(lo, hi, max_ticks, v, &step);
  } else {
    static const int m125[] = {1, 2, 5}, m19[] = {1, 2, 3, 4, 5, 6, 7, 8, 9};
    double k0 = ceil(log10(lo) - 1e-9), k1 = floor(log10(hi) + 1e-9);
    size_t n_dec = k1 >= k0 ? (size_t)(k1 - k0 + 1.0) : 0;
    size_t n125 = mantissa_ticks(lo, hi, m125, 3, v, 0);
    size_t n19 = mantissa_ticks(lo, hi, m19, 9, v, 0);
    common_decimals = 0;
    if (n_dec >= 3) {
      out->n = decade_ticks(lo, hi, max_ticks, v);
    } else if (n125 >= 3 && n125 <= (size_t)max_ticks) {
      out->n = mantissa_ticks(lo, hi, m125, 3, v, RP_FIGURE_MAX_TICKS);
    } else if (n19 >= 3 && n19 <= (size_t)max_ticks) {
      out->n = mantissa_ticks(lo, hi, m19, 9, v, RP_FIGURE_MAX_TICKS);
    } else if (n_dec >= 2) {
      out->n = decade_ticks(lo, hi, max_ticks, v);
    } else {
      out->n = linear_ticks(lo, hi, max_ticks, v, &step);
      common_decimals = 1;
    }
  }
  /* One style for the axis: plain when every label is short, else powers of ten. */
  double amax = 0.0;
  int dmax = 0;
  for (size_t i = 0; i < out->n; i++) {
    amax = fmax(amax, fabs(v[i]));
    int d = decimals_of(v[i]);
    if (d > dmax) dmax = d;
  }
  if (common_decimals && step > 0.0) dmax = decimals_of(step);
  out->powers = !(amax < 1e5 && dmax <= 4);
  int e_common = amax > 0.0 ? (int)floor(log10(amax) + 1e-9) : 0;
  for (size_t i = 0; i < out->n; i++) {
    char *lab = out->label[i];
    const size_t L = RP_FIGURE_TICK_LABEL_LEN;
    if (!out->powers) {
      snprintf(lab, L, "%.*f", common_decimals ? dmax : decimals_of(v[i]), v[i]);
    } else if (v[i] == 0.0) {
      snprintf(lab, L, "0");
    } else if (common_decimals) {
      int dec = decimals_of(step / pow(10.0, e_common));
      if (dec > 6) dec = 6;
      snprintf(lab, L, "%.*f×10#u%d#d", dec, v[i] / pow(10.0, e_common), e_common);
    } else {
      int k = (int)floor(log10(fabs(v[i])) + 1e-9);
      double m = v[i] / pow(10.0, k);
      if (fabs(m - 1.0) < 1e-9) snprintf(lab, L, "10#u%d#d", k);
      else snprintf(lab, L, "%.3g×10#u%d#d", m, k);
    }
  }
  return RP_OK;
}

/* ------------------------------------------------------------------- text */

/* Approximate number of glyphs in a PLplot string (escapes counted as what they show,
 * UTF-8 continuation bytes not counted). */
static double text_glyphs(const char *s) {
  double n = 0.0;
  if (s == NULL) return 0.0;
  for (const unsigned char *p = (const unsigned char *)s; *p; p++) {
    if (*p == '#' && p[1] != '\0') {
      p++;
      if (*p == '#') n += 1.0;
      else if (*p == 'g' && p[1] != '\0') { p++; n += 1.0; }
      else if (*p == '(') { while (*p && *p != ')') p++; if (!*p) break; n += 1.0; }
      else if (*p == 'f' && p[1] != '\0') p++;
      continue;
    }
    if ((*p & 0xC0) != 0x80) n += 1.0;
  }
  return n;
}

/* Glyph width of a tick label (superscripts count 0.7). */
static double label_glyphs(const char *s) {
  double g = text_glyphs(s);
  const char *sup = strstr(s, "#u");
  if (sup != NULL) g -= 0.3 * text_glyphs(sup);
  return g;
}

static double widest_label(const rp_figure_ticks *t) {
  double w = 1.0;
  for (size_t i = 0; i < t->n; i++) w = fmax(w, label_glyphs(t->label[i]));
  return w;
}

/* Average advance of a DejaVu Sans glyph in PLplot character heights (measured on
 * rendered figures: digits 0.82 h, mixed text about 0.85 h). */
static const double GLYPH_W = 0.85;
/* Smallest text: 11 px (1 px = 25.4/72 mm). */
static const double MIN_TEXT_MM = 11.0 * 25.4 / 72.0;

/* Text height for a cell of cw x ch mm on a page of pw x ph mm (tuned by eye on 400 x 300
 * to 1600 x 1000 px figures of 1 to 6 panels). */
static double text_height_mm(double cw, double ch, double pw, double ph) {
  return fmax(MIN_TEXT_MM, fmin(0.022 * fmin(cw, ch), 0.02 * fmin(pw, ph)));
}

static double text_scale_for(double h_mm) {
  PLFLT def, cur;
  plgchr(&def, &cur);
  return h_mm / def;
}

static void set_text_height(double h_mm) { plschr(0.0, text_scale_for(h_mm)); }

/* ----------------------------------------------------------------- validation */

static rp_status check_xy(const rp_figure_panel *p, size_t k, size_t *max_n, rp_error *err) {
  const rp_figure_xy *q = &p->xy;
  if (q->n_series > 0 && q->series == NULL)
    return rp_error_set(err, RP_EINVAL, "panel %zu: series is NULL with n_series = %zu", k,
                        q->n_series);
  if (q->one_to_one && (q->log_x != 0) != (q->log_y != 0))
    return rp_error_set(err, RP_EINVAL,
                        "panel %zu: 1:1 panel needs both axes linear or both log "
                        "(log_x = %d, log_y = %d)", k, q->log_x, q->log_y);
  for (size_t j = 0; j < q->n_series; j++) {
    const rp_figure_series *s = &q->series[j];
    if (s->n > 0 && (s->x == NULL || s->y == NULL))
      return rp_error_set(err, RP_EINVAL, "panel %zu series %zu: x or y is NULL with n = %zu",
                          k, j, s->n);
    if (s->n > (size_t)INT_MAX)
      return rp_error_set(err, RP_EINVAL, "panel %zu series %zu: n = %zu points is too many",
                          k, j, s->n);
    if (s->style < RP_FIGURE_STYLE_LINE || s->style > RP_FIGURE_STYLE_LINE_MARKERS)
      return rp_error_set(err, RP_EINVAL,
                          "panel %zu series %zu: style %d is not 0 (line), 1 (markers) or "
                          "2 (line+markers)", k, j, s->style);
    for (size_t i = 0; i < s->n; i++) {
      double v[2] = {s->x[i], s->y[i]};
      for (int a = 0; a < 2; a++) {
        const char *ax = a == 0 ? "x" : "y";
        int log_ax = a == 0 ? q->log_x : q->log_y;
        if (isinf(v[a]))
          return rp_error_set(err, RP_EINVAL, "panel %zu series %zu: %s[%zu] = %g is infinite",
                              k, j, ax, i, v[a]);
        if (log_ax && isfinite(v[a]) && v[a] <= 0.0)
          return rp_error_set(err, RP_EINVAL,
                              "panel %zu series %zu: %s[%zu] = %g is not > 0 on a log %s axis",
                              k, j, ax, i, v[a], ax);
      }
    }
    if (s->n > *max_n) *max_n = s->n;
  }
  return RP_OK;
}

static rp_status check_scale(const rp_figure_scale *s, size_t k, rp_error *err) {
  if (!isfinite(s->vmin) || !isfinite(s->vmax) || !(s->vmin < s->vmax))
    return rp_error_set(err, RP_EINVAL,
                        "panel %zu: colour scale [%g, %g] is not finite and increasing", k,
                        s->vmin, s->vmax);
  if (!cmap_ok(s->colormap))
    return rp_error_set(err, RP_EINVAL,
                        "panel %zu: colour map %d is not 0 (sequential) or 1 (diverging)", k,
                        s->colormap);
  return RP_OK;
}

static double cw_step_deg(double a0, double a1) {
  double d = fmod(a1 - a0, 360.0);
  return d < 0.0 ? d + 360.0 : d;
}

static rp_status check_gates(const double *r, size_t n, const char *name, size_t k,
                             rp_error *err) {
  for (size_t i = 0; i < n; i++) {
    if (!isfinite(r[i]) || r[i] < 0.0)
      return rp_error_set(err, RP_EINVAL, "panel %zu: PPI %s[%zu] = %g is not finite and >= 0",
                          k, name, i, r[i]);
    if (i > 0 && !(r[i] > r[i - 1]))
      return rp_error_set(err, RP_EINVAL,
                          "panel %zu: PPI %s[%zu] = %g km is not above %s[%zu] = %g km", k, name,
                          i, r[i], name, i - 1, r[i - 1]);
  }
  return RP_OK;
}

static rp_status check_ppi(const rp_figure_panel *p, size_t k, rp_error *err) {
  const rp_figure_ppi *q = &p->ppi;
  if (q->range_km == NULL || q->azimuth_deg == NULL || q->values == NULL)
    return rp_error_set(err, RP_EINVAL, "panel %zu: PPI range_km, azimuth_deg or values is NULL",
                        k);
  if (q->n_range < 2 || q->n_azimuth < 2)
    return rp_error_set(err, RP_EINVAL,
                        "panel %zu: PPI needs >= 2 ranges and >= 2 azimuths (got %zu, %zu)", k,
                        q->n_range, q->n_azimuth);
  if (q->n_range > RP_FIGURE_MAX_CELLS || q->n_azimuth > RP_FIGURE_MAX_CELLS)
    return rp_error_set(err, RP_EINVAL, "panel %zu: PPI %zu ranges x %zu azimuths, at most %d each",
                        k, q->n_range, q->n_azimuth, RP_FIGURE_MAX_CELLS);
  RP_TRY(check_gates(q->range_km, q->n_range, "range_km", k, err));
  if (q->ground_range_km != NULL)
    RP_TRY(check_gates(q->ground_range_km, q->n_range, "ground_range_km", k, err));
  double span = 0.0;
  for (size_t i = 0; i < q->n_azimuth; i++) {
    double a = q->azimuth_deg[i];
    if (!isfinite(a))
      return rp_error_set(err, RP_EINVAL, "panel %zu: PPI azimuth_deg[%zu] = %g is not finite",
                          k, i, a);
    if (i > 0) {
      double d = cw_step_deg(q->azimuth_deg[i - 1], a);
      if (!(d > 0.0))
        return rp_error_set(err, RP_EINVAL,
                            "panel %zu: PPI azimuth_deg[%zu] = %g° repeats azimuth_deg[%zu]", k,
                            i, a, i - 1);
      span += d;
    }
  }
  if (span >= 360.0)
    return rp_error_set(err, RP_EINVAL,
                        "panel %zu: PPI azimuths span %g° clockwise (>= 360°): not in scan order",
                        k, span);
  size_t n = q->n_range * q->n_azimuth;
  for (size_t i = 0; i < n; i++)
    if (isinf(q->values[i]))
      return rp_error_set(err, RP_EINVAL, "panel %zu: PPI value at azimuth %zu, range %zu is infinite",
                          k, i / q->n_range, i % q->n_range);
  return check_scale(&p->scale, k, err);
}

static rp_status check_rhi(const rp_figure_panel *p, size_t k, rp_error *err) {
  const rp_figure_rhi *q = &p->rhi;
  if (q->corner_ground_km == NULL || q->corner_height_km == NULL || q->values == NULL)
    return rp_error_set(err, RP_EINVAL,
                        "panel %zu: RHI corner_ground_km, corner_height_km or values is NULL", k);
  if (q->n_gate < 1 || q->n_ray < 1 || q->n_gate > RP_FIGURE_MAX_CELLS ||
      q->n_ray > RP_FIGURE_MAX_CELLS)
    return rp_error_set(err, RP_EINVAL, "panel %zu: RHI %zu gates x %zu rays, need 1 to %d each",
                        k, q->n_gate, q->n_ray, RP_FIGURE_MAX_CELLS);
  size_t nc = (q->n_gate + 1) * (q->n_ray + 1);
  for (size_t i = 0; i < nc; i++) {
    double g = q->corner_ground_km[i], h = q->corner_height_km[i];
    if (!isfinite(g) || g < 0.0)
      return rp_error_set(err, RP_EINVAL, "panel %zu: RHI corner_ground_km[%zu] = %g is not "
                          "finite and >= 0", k, i, g);
    if (!isfinite(h) || h < -1.0 || h > 100.0)
      return rp_error_set(err, RP_EINVAL, "panel %zu: RHI corner_height_km[%zu] = %g km is not "
                          "in [-1, 100] km", k, i, h);
  }
  for (size_t i = 0; i < q->n_gate * q->n_ray; i++)
    if (isinf(q->values[i]))
      return rp_error_set(err, RP_EINVAL, "panel %zu: RHI value at ray %zu, gate %zu is infinite",
                          k, i / q->n_gate, i % q->n_gate);
  return check_scale(&p->scale, k, err);
}

/* ---------------------------------------------------------------- layout */

typedef struct {
  double lo, hi; /* plotting coordinates (log10 on a log axis) */
} range1;

/* Legend sizes (mm), estimated from the text (pllegend draws, it cannot measure). */
static const double LEGEND_TEXT_SCALE = 0.9;
static const double LEGEND_SPACING = 1.9;
static const double LEGEND_GAP = 0.012;
static const double XLABEL_DISP = 3.6; /* x-axis label below the frame, char heights */
static const double TICK_MM = 1.2;     /* tick mark length */

typedef struct {
  double vx0, vx1, vy0, vy1; /* viewport, page mm */
  range1 rx, ry;
  int log_x, log_y;
  rp_figure_ticks tx, ty;
  double ydisp; /* y-axis label displacement, char heights */
  /* legend */
  int legend_n, legend_below, legend_cols, legend_rows;
  PLINT legend_pos;
  double sample_chars;
  /* colour bar */
  int cbar, cbar_log, cbar_cmap;
  double cb_x0, cb_x1, cb_lo, cb_hi; /* cb_lo/hi in bar coordinates (log10 if cbar_log) */
  const char *cbar_label;
  rp_figure_ticks tcb;
  double cb_disp;
  /* scatter density */
  int density;
  size_t nbx, nby;
  /* PPI geometry */
  double ppi_rmax, ppi_a0, ppi_a1, ring_step;
  int ppi_closed;
} layout;

/* Point transform to plotting coordinates. */
static double tr(double v, int is_log) { return is_log ? log10(v) : v; }

static int finite2(double x, double y) { return isfinite(x) && isfinite(y); }

static size_t density_threshold(const rp_figure_panel *p) {
  return p->xy.density_min_n > 0 ? p->xy.density_min_n : RP_FIGURE_DENSITY_DEFAULT;
}

static size_t finite_points(const rp_figure_series *s) {
  size_t n = 0;
  for (size_t i = 0; i < s->n; i++) n += finite2(s->x[i], s->y[i]) ? 1u : 0u;
  return n;
}

/* Points (and points along drawn lines, 8 per segment) in a box of plotting coordinates. */
static size_t count_in_box(const rp_figure_panel *p, const layout *L, double x0, double x1,
                           double y0, double y1) {
  size_t count = 0;
  for (size_t j = 0; j < p->xy.n_series; j++) {
    const rp_figure_series *s = &p->xy.series[j];
    double px = 0.0, py = 0.0;
    int prev = 0;
    for (size_t i = 0; i < s->n; i++) {
      if (!finite2(s->x[i], s->y[i])) { prev = 0; continue; }
      double x = tr(s->x[i], L->log_x), y = tr(s->y[i], L->log_y);
      if (x >= x0 && x <= x1 && y >= y0 && y <= y1) count++;
      if (prev && s->style != RP_FIGURE_STYLE_MARKERS) {
        for (int q = 1; q < 8; q++) {
          double w = q / 8.0, xq = px + w * (x - px), yq = py + w * (y - py);
          if (xq >= x0 && xq <= x1 && yq >= y0 && yq <= y1) count++;
        }
      }
      px = x; py = y; prev = 1;
    }
  }
  return count;
}

/* Ticks for an axis of len_mm: at most one per ~6 character heights, fewer until the
 * labels (x: side by side; y: stacked) do not touch. */
static void axis_ticks_fit(double lo, double hi, int is_log, double len_mm, double h_mm,
                           int is_x, rp_figure_ticks *t) {
  double a = is_log ? pow(10.0, lo) : lo, b = is_log ? pow(10.0, hi) : hi;
  int max = (int)fmin(10.0, fmax(3.0, floor(len_mm / (6.0 * h_mm)) + 1.0));
  for (; max >= 2; max--) {
    if (rp_figure_axis_ticks(a, b, is_log, max, t, NULL) != RP_OK) { t->n = 0; return; }
    double need = is_x ? (double)t->n * (GLYPH_W * widest_label(t) + 1.5) * h_mm
                       : (double)t->n * 1.6 * h_mm;
    if (need <= len_mm) return;
  }
}

static double ylabel_disp(double wy) { return 1.2 + GLYPH_W * wy + 1.0; }

/* Colour-bar width (mm) to reserve on the right of a viewport: gap, bar, tick labels,
 * label. */
static void colorbar_setup(layout *L, double vy_len, double h_mm) {
  axis_ticks_fit(L->cb_lo, L->cb_hi, L->cbar_log, vy_len, h_mm, 0, &L->tcb);
  L->cb_disp = 0.8 + GLYPH_W * widest_label(&L->tcb) + 1.2;
}

static double colorbar_reserve(const layout *L, double h_mm) {
  return (1.0 + 1.2 + L->cb_disp + 2.0) * h_mm;
}

/* PPI extent: outer ground range edge, first and last azimuth edges (unwrapped, degrees)
 * and whether the rays close the circle (gap through north <= 1.5 x largest step). */
static void ppi_extent(const rp_figure_ppi *q, double *rmax, double *a0, double *a1,
                       int *closed) {
  const double *r = q->ground_range_km != NULL ? q->ground_range_km : q->range_km;
  size_t nr = q->n_range, na = q->n_azimuth;
  *rmax = r[nr - 1] + 0.5 * (r[nr - 1] - r[nr - 2]);
  double dmax = 0.0, u = q->azimuth_deg[0];
  for (size_t i = 1; i < na; i++) {
    double d = cw_step_deg(q->azimuth_deg[i - 1], q->azimuth_deg[i]);
    u += d;
    dmax = fmax(dmax, d);
  }
  double first = q->azimuth_deg[0], gap = 360.0 - (u - first);
  *closed = gap <= 1.5 * dmax;
  if (*closed) {
    *a0 = first - 0.5 * gap;
    *a1 = u + 0.5 * gap;
  } else {
    *a0 = first - 0.5 * cw_step_deg(q->azimuth_deg[0], q->azimuth_deg[1]);
    *a1 = u + 0.5 * cw_step_deg(q->azimuth_deg[na - 2], q->azimuth_deg[na - 1]);
  }
}

/* A ring spacing of 1, 2, 2.5 or 5 x 10^k km giving 3 to 6 rings up to rmax. */
static double ring_step(double rmax) {
  double raw = rmax / 4.0;
  double e = pow(10.0, floor(log10(raw)));
  static const double m[] = {1.0, 2.0, 2.5, 5.0, 10.0};
  for (int i = 0; i < 5; i++)
    if (m[i] * e >= raw) return m[i] * e;
  return 10.0 * e;
}

static double title_rows(const rp_figure_panel *p) {
  return 1.2 + (p->title != NULL ? 1.7 : 0.0) + (p->subtitle != NULL ? 1.8 : 0.0);
}

/* Layout of an xy panel in its cell. */
static rp_status layout_xy(const rp_figure_panel *p, size_t k, double cx0, double cy0,
                           double cw, double ch, double h, layout *L, rp_error *err) {
  const rp_figure_xy *q = &p->xy;
  L->log_x = q->log_x != 0;
  L->log_y = q->log_y != 0;
  double xlo = NAN, xhi = NAN, ylo = NAN, yhi = NAN;
  for (size_t j = 0; j < q->n_series; j++) {
    const rp_figure_series *s = &q->series[j];
    for (size_t i = 0; i < s->n; i++) {
      if (!finite2(s->x[i], s->y[i])) continue;
      xlo = isnan(xlo) ? s->x[i] : fmin(xlo, s->x[i]);
      xhi = isnan(xhi) ? s->x[i] : fmax(xhi, s->x[i]);
      ylo = isnan(ylo) ? s->y[i] : fmin(ylo, s->y[i]);
      yhi = isnan(yhi) ? s->y[i] : fmax(yhi, s->y[i]);
    }
  }
  double a, b, c, d;
  if (q->one_to_one) {
    double lo = fmin(xlo, ylo), hi = fmax(xhi, yhi); /* fmin ignores a NaN side */
    RP_TRY(rp_figure_axis_range(lo, hi, L->log_x, &a, &b, err));
    c = a; d = b;
  } else {
    RP_TRY(rp_figure_axis_range(xlo, xhi, L->log_x, &a, &b, err));
    RP_TRY(rp_figure_axis_range(ylo, yhi, L->log_y, &c, &d, err));
  }
  L->rx = (range1){tr(a, L->log_x), tr(b, L->log_x)};
  L->ry = (range1){tr(c, L->log_y), tr(d, L->log_y)};

  L->density = p->kind == RP_FIGURE_SCATTER && q->n_series > 0 &&
               finite_points(&q->series[0]) > density_threshold(p);
  double mb = 5.1, mr = 1.5, mt = title_rows(p);
  axis_ticks_fit(L->ry.lo, L->ry.hi, L->log_y, ch - (mb + mt) * h, h, 0, &L->ty);
  L->ydisp = ylabel_disp(widest_label(&L->ty));
  double ml = L->ydisp + (p->ylabel != NULL ? 0.9 : -0.5);
  L->vx0 = cx0 + ml * h;
  L->vx1 = cx0 + cw - mr * h;
  L->vy0 = cy0 + mb * h;
  L->vy1 = cy0 + ch - mt * h;
  if (L->density) {
    L->cbar = 1;
    L->cbar_log = 1;
    L->cbar_cmap = RP_FIGURE_CMAP_VIRIDIS;
    L->cbar_label = "points per cell";
    L->cb_lo = 0.0;
    L->cb_hi = 1.0; /* replaced by the counts when drawn; the labels' width is similar */
    colorbar_setup(L, L->vy1 - L->vy0, h);
    L->vx1 -= colorbar_reserve(L, h) - mr * h + 0.5 * h;
  }

  /* Legend: the emptiest inside corner; below the panel when every corner has data. */
  L->legend_n = 0;
  double wmax = 0.0;
  int any_line = 0;
  for (size_t j = 0; j < q->n_series; j++) {
    if (q->series[j].label == NULL) continue;
    L->legend_n++;
    wmax = fmax(wmax, text_glyphs(q->series[j].label));
    if (q->series[j].style != RP_FIGURE_STYLE_MARKERS && !(j == 0 && L->density)) any_line = 1;
  }
  L->sample_chars = any_line ? 3.5 : 1.2;
  L->legend_cols = 1;
  L->legend_rows = L->legend_n;
  L->legend_below = 0;
  L->legend_pos = PL_POSITION_INSIDE | PL_POSITION_TOP | PL_POSITION_RIGHT | PL_POSITION_VIEWPORT;
  if (L->legend_n > 0) {
    double ew = h * (L->sample_chars + 2.0 + GLYPH_W * LEGEND_TEXT_SCALE * wmax);
    double lh = h * (LEGEND_SPACING * L->legend_n + 0.6);
    double side_w = L->vx1 - L->vx0, side_h = L->vy1 - L->vy0;
    if (q->one_to_one) side_w = side_h = fmin(side_w, side_h);
    double fw = fmin(1.0, ew / side_w + LEGEND_GAP), fh = fmin(1.0, lh / side_h + LEGEND_GAP);
    static const PLINT corners[4] = {PL_POSITION_TOP | PL_POSITION_RIGHT,
                                     PL_POSITION_TOP | PL_POSITION_LEFT,
                                     PL_POSITION_BOTTOM | PL_POSITION_RIGHT,
                                     PL_POSITION_BOTTOM | PL_POSITION_LEFT};
    size_t best = SIZE_MAX;
    for (int cidx = 0; cidx < 4; cidx++) {
      int right = (corners[cidx] & PL_POSITION_RIGHT) != 0;
      int top = (corners[cidx] & PL_POSITION_TOP) != 0;
      double sx = L->rx.hi - L->rx.lo, sy = L->ry.hi - L->ry.lo;
      double x0 = right ? L->rx.hi - fw * sx : L->rx.lo, x1 = right ? L->rx.hi : L->rx.lo + fw * sx;
      double y0 = top ? L->ry.hi - fh * sy : L->ry.lo, y1 = top ? L->ry.hi : L->ry.lo + fh * sy;
      size_t cnt = count_in_box(p, L, x0, x1, y0, y1);
      if (cnt < best) {
        best = cnt;
        L->legend_pos = corners[cidx] | PL_POSITION_INSIDE | PL_POSITION_VIEWPORT;
      }
    }
    if (best > 0 || fw >= 1.0 || fh >= 1.0) {
      /* Below the panel, under the x-axis label, in as many columns as fit the cell. */
      int cols = (int)fmax(1.0, floor((cw - 1.0 * h) / ew));
      if (cols > L->legend_n) cols = L->legend_n;
      int rows = (L->legend_n + cols - 1) / cols;
      double need = h * (LEGEND_SPACING * rows + 0.6) + 1.3 * h;
      if (ew <= cw - 1.0 * h && L->vy1 - (L->vy0 + need) >= 5.0 * h) {
        L->legend_below = 1;
        L->legend_cols = cols;
        L->legend_rows = rows;
        L->vy0 += need;
        L->legend_pos = PL_POSITION_OUTSIDE | PL_POSITION_BOTTOM | PL_POSITION_VIEWPORT;
      }
    }
  }
  if (q->one_to_one) {
    double side = fmin(L->vx1 - L->vx0, L->vy1 - L->vy0);
    double mx = 0.5 * (L->vx0 + L->vx1), my = 0.5 * (L->vy0 + L->vy1);
    L->vx0 = mx - 0.5 * side; L->vx1 = mx + 0.5 * side;
    if (!L->legend_below) { L->vy0 = my - 0.5 * side; L->vy1 = my + 0.5 * side; }
    else { L->vy0 = L->vy1 - side; }
  }
  if (L->vx1 - L->vx0 < 6.0 * h || L->vy1 - L->vy0 < 3.0 * h)
    return rp_error_set(err, RP_EINVAL, "panel %zu does not fit in its %.0f x %.0f mm cell", k,
                        cw, ch);
  axis_ticks_fit(L->ry.lo, L->ry.hi, L->log_y, L->vy1 - L->vy0, h, 0, &L->ty);
  axis_ticks_fit(L->rx.lo, L->rx.hi, L->log_x, L->vx1 - L->vx0, h, 1, &L->tx);
  if (L->density) {
    L->nbx = (size_t)fmax(10.0, fmin(80.0, floor((L->vx1 - L->vx0) / 2.5)));
    L->nby = (size_t)fmax(10.0, fmin(80.0, floor((L->vy1 - L->vy0) / 2.5)));
  }
  return RP_OK;
}

/* Layout of a field panel (PPI or RHI) in its cell. */
static rp_status layout_field(const rp_figure_panel *p, size_t k, double cx0, double cy0,
                              double cw, double ch, double h, layout *L, rp_error *err) {
  L->log_x = L->log_y = 0;
  double x0, x1, y0, y1;
  if (p->kind == RP_FIGURE_PPI) {
    ppi_extent(&p->ppi, &L->ppi_rmax, &L->ppi_a0, &L->ppi_a1, &L->ppi_closed);
    x0 = x1 = y0 = y1 = 0.0; /* the radar is in view */
    for (int s = 0; s <= 720; s++) { /* the outer arc can bulge past its corners */
      double a = (L->ppi_a0 + (L->ppi_a1 - L->ppi_a0) * s / 720.0) * M_PI / 180.0;
      x0 = fmin(x0, L->ppi_rmax * sin(a)); x1 = fmax(x1, L->ppi_rmax * sin(a));
      y0 = fmin(y0, L->ppi_rmax * cos(a)); y1 = fmax(y1, L->ppi_rmax * cos(a));
    }
    double side = fmax(x1 - x0, y1 - y0) * 1.04, mx = 0.5 * (x0 + x1), my = 0.5 * (y0 + y1);
    L->rx = (range1){mx - 0.5 * side, mx + 0.5 * side};
    L->ry = (range1){my - 0.5 * side, my + 0.5 * side};
    L->ring_step = ring_step(L->ppi_rmax);
  } else {
    const rp_figure_rhi *q = &p->rhi;
    size_t nc = (q->n_gate + 1) * (q->n_ray + 1);
    x0 = y0 = INFINITY; x1 = y1 = -INFINITY;
    for (size_t i = 0; i < nc; i++) {
      x0 = fmin(x0, q->corner_ground_km[i]); x1 = fmax(x1, q->corner_ground_km[i]);
      y0 = fmin(y0, q->corner_height_km[i]); y1 = fmax(y1, q->corner_height_km[i]);
    }
    double a, b, c, d;
    RP_TRY(rp_figure_axis_range(x0, x1, 0, &a, &b, err));
    RP_TRY(rp_figure_axis_range(y0, y1, 0, &c, &d, err));
    L->rx = (range1){a, b};
    L->ry = (range1){c, d};
  }
  L->cbar = 1;
  L->cbar_log = 0;
  L->cbar_cmap = p->scale.colormap;
  L->cbar_label = p->scale.label;
  L->cb_lo = p->scale.vmin;
  L->cb_hi = p->scale.vmax;
  double mb = 5.1, mt = title_rows(p);
  double ah = ch - (mb + mt) * h;
  colorbar_setup(L, ah, h);
  axis_ticks_fit(L->ry.lo, L->ry.hi, 0, ah, h, 0, &L->ty);
  L->ydisp = ylabel_disp(widest_label(&L->ty));
  double ml = L->ydisp + 0.9, mr = colorbar_reserve(L, h) / h;
  double aw = cw - (ml + mr) * h;
  if (p->kind == RP_FIGURE_PPI) {
    double side = fmin(aw, ah);
    if (side < 12.0 * h)
      return rp_error_set(err, RP_EINVAL, "panel %zu: a PPI does not fit in its %.0f x %.0f mm "
                          "cell", k, cw, ch);
    L->vx0 = cx0 + ml * h + 0.5 * (aw - side);
    L->vy0 = cy0 + mb * h + 0.5 * (ah - side);
    L->vx1 = L->vx0 + side;
    L->vy1 = L->vy0 + side;
  } else {
    if (aw < 12.0 * h || ah < 6.0 * h)
      return rp_error_set(err, RP_EINVAL, "panel %zu: an RHI does not fit in its %.0f x %.0f mm "
                          "cell", k, cw, ch);
    L->vx0 = cx0 + ml * h;
    L->vx1 = L->vx0 + aw;
    L->vy0 = cy0 + mb * h;
    L->vy1 = L->vy0 + ah;
  }
  axis_ticks_fit(L->ry.lo, L->ry.hi, 0, L->vy1 - L->vy0, h, 0, &L->ty);
  axis_ticks_fit(L->rx.lo, L->rx.hi, 0, L->vx1 - L->vx0, h, 1, &L->tx);
  colorbar_setup(L, L->vy1 - L->vy0, h);
  return RP_OK;
}

/* ---------------------------------------------------------------- drawing */

/* Ticks, tick labels and grid of the current viewport/window. grid: light lines first. */
static void draw_ticks(const layout *L, double h, int grid) {
  const double wx = (L->rx.hi - L->rx.lo) / (L->vx1 - L->vx0); /* world per mm */
  const double wy = (L->ry.hi - L->ry.lo) / (L->vy1 - L->vy0);
  for (size_t i = 0; i < L->tx.n; i++) {
    double x = tr(L->tx.value[i], L->log_x);
    if (grid) { pljoin(x, L->ry.lo, x, L->ry.hi); continue; }
    pljoin(x, L->ry.lo, x, L->ry.lo + TICK_MM * wy);
    pljoin(x, L->ry.hi, x, L->ry.hi - TICK_MM * wy);
    plmtex("b", 1.5, (x - L->rx.lo) / (L->rx.hi - L->rx.lo), 0.5, L->tx.label[i]);
  }
  for (size_t i = 0; i < L->ty.n; i++) {
    double y = tr(L->ty.value[i], L->log_y);
    if (grid) { pljoin(L->rx.lo, y, L->rx.hi, y); continue; }
    pljoin(L->rx.lo, y, L->rx.lo + TICK_MM * wx, y);
    pljoin(L->rx.hi, y, L->rx.hi - TICK_MM * wx, y);
    plmtex("lv", 0.5, (y - L->ry.lo) / (L->ry.hi - L->ry.lo), 1.0, L->ty.label[i]);
  }
  (void)h;
}

static void draw_frame(const layout *L, double h) {
  plcol0(COL_FG);
  plwidth(1.0);
  plbox("bc", 0.0, 0, "bc", 0.0, 0);
  draw_ticks(L, h, 0);
}

/* Title and subtitle above the viewport, shrunk to avail_mm. */
static void draw_titles(const char *title, const char *subtitle, double avail_mm, double h) {
  double disp = 1.3;
  if (subtitle != NULL) {
    double s = 0.85, w = GLYPH_W * h * s * text_glyphs(subtitle);
    if (w > avail_mm) s *= avail_mm / w;
    set_text_height(h * s);
    plmtex("t", disp / s, 0.5, 0.5, subtitle);
    disp += 1.8;
  }
  if (title != NULL) {
    double s = 1.0, w = GLYPH_W * h * text_glyphs(title);
    if (w > avail_mm) s = avail_mm / w;
    set_text_height(h * s);
    plmtex("t", disp / s, 0.5, 0.5, title);
  }
  set_text_height(h);
}

static void set_cmap1(int colormap) {
  PLINT ri[CMAP_N], gi[CMAP_N], bi[CMAP_N];
  for (int k = 0; k < CMAP_N; k++) {
    double c[3];
    cmap_entry(colormap, k, c);
    ri[k] = to_byte(c[0]); gi[k] = to_byte(c[1]); bi[k] = to_byte(c[2]);
  }
  plscmap1n(CMAP_N);
  plscmap1(ri, gi, bi, CMAP_N);
}

/* Colour bar right of the viewport: a 256-step image strip, our ticks and the label. */
static void draw_colorbar(const layout *L, double h) {
  double bx0 = L->vx1 + 1.0 * h, bx1 = bx0 + 1.2 * h;
  plsvpa(bx0, bx1, L->vy0, L->vy1);
  plwind(0.0, 1.0, L->cb_lo, L->cb_hi);
  PLFLT col[CMAP_N], *cols[1] = {col}, xe[2] = {0.0, 1.0}, ye[CMAP_N + 1];
  for (int k = 0; k < CMAP_N; k++) col[k] = L->cb_lo + (L->cb_hi - L->cb_lo) * (k + 0.5) / CMAP_N;
  for (int k = 0; k <= CMAP_N; k++) ye[k] = L->cb_lo + (L->cb_hi - L->cb_lo) * k / CMAP_N;
  PLcGrid g = {xe, ye, NULL, 2, CMAP_N + 1, 0};
  plimagefr((PLFLT_MATRIX)cols, 1, CMAP_N, 0.0, 1.0, 0.0, (double)CMAP_N, L->cb_lo, L->cb_hi,
            L->cb_lo, L->cb_hi, pltr1, &g);
  plcol0(COL_FG);
  plbox("bc", 0.0, 0, "bc", 0.0, 0);
  for (size_t i = 0; i < L->tcb.n; i++) {
    double y = tr(L->tcb.value[i], L->cbar_log);
    pljoin(1.0, y, 0.6, y);
    plmtex("rv", 0.8, (y - L->cb_lo) / (L->cb_hi - L->cb_lo), 0.0, L->tcb.label[i]);
  }
  if (L->cbar_label != NULL) plmtex("r", L->cb_disp, 0.5, 0.5, L->cbar_label);
}

static void draw_series(const rp_figure_series *s, size_t j, const layout *L, double h,
                        double *bx, double *by) {
  plcol0(COL_SERIES0 + (PLINT)(j % N_SERIES_COLOURS));
  pllsty((PLINT)(1 + (j / N_SERIES_COLOURS) % 8));
  size_t i = 0;
  while (i < s->n) {
    while (i < s->n && !finite2(s->x[i], s->y[i])) i++;
    size_t m = 0;
    while (i < s->n && finite2(s->x[i], s->y[i])) {
      bx[m] = tr(s->x[i], L->log_x);
      by[m] = tr(s->y[i], L->log_y);
      m++; i++;
    }
    if (m == 0) break;
    if (s->style != RP_FIGURE_STYLE_MARKERS && m >= 2) {
      plwidth(2.0);
      plline((PLINT)m, bx, by);
    }
    if (s->style != RP_FIGURE_STYLE_LINE || m == 1) {
      set_text_height(MARKER_SCALE * h);
      plstring((PLINT)m, bx, by, MARKERS[j % N_MARKERS]);
      set_text_height(h);
    }
  }
  pllsty(1);
  plwidth(1.0);
}

/* 2-D histogram of series s on the panel's axes, shaded by log10(count); empty cells
 * blank. img has nbx * nby entries, rows nbx pointers. Returns log10 of the largest count
 * shown on the colour bar (at least 1 decade). */
static double draw_density(const rp_figure_series *s, layout *L, double *img, double **rows,
                           double *xe, double *ye) {
  size_t nbx = L->nbx, nby = L->nby;
  for (size_t i = 0; i < nbx * nby; i++) img[i] = 0.0;
  double sx = (L->rx.hi - L->rx.lo) / (double)nbx, sy = (L->ry.hi - L->ry.lo) / (double)nby;
  for (size_t i = 0; i < s->n; i++) {
    if (!finite2(s->x[i], s->y[i])) continue;
    double x = (tr(s->x[i], L->log_x) - L->rx.lo) / sx, y = (tr(s->y[i], L->log_y) - L->ry.lo) / sy;
    if (x < 0.0 || y < 0.0 || x >= (double)nbx || y >= (double)nby) continue;
    img[(size_t)x * nby + (size_t)y] += 1.0;
  }
  double cmax = 1.0;
  for (size_t i = 0; i < nbx * nby; i++) cmax = fmax(cmax, img[i]);
  double zmax = fmax(1.0, log10(cmax));
  for (size_t i = 0; i < nbx * nby; i++) img[i] = img[i] > 0.0 ? log10(img[i]) : -1.0;
  for (size_t i = 0; i < nbx; i++) rows[i] = img + i * nby;
  for (size_t i = 0; i <= nbx; i++) xe[i] = L->rx.lo + sx * (double)i;
  for (size_t i = 0; i <= nby; i++) ye[i] = L->ry.lo + sy * (double)i;
  PLcGrid g = {xe, ye, NULL, (PLINT)(nbx + 1), (PLINT)(nby + 1), 0};
  set_cmap1(RP_FIGURE_CMAP_VIRIDIS);
  plimagefr((PLFLT_MATRIX)rows, (PLINT)nbx, (PLINT)nby, 0.0, (double)nbx, 0.0, (double)nby, 0.0,
            zmax, 0.0, zmax, pltr1, &g);
  return zmax;
}

static void draw_legend(const rp_figure_panel *p, const layout *L, double h) {
  enum { MAXL = 64 };
  PLINT opt[MAXL], tcol[MAXL], lcol[MAXL], lsty[MAXL], scol[MAXL], snum[MAXL];
  PLINT bcol[MAXL], bpat[MAXL];
  PLFLT lwid[MAXL], sscale[MAXL], bscale[MAXL], bwid[MAXL];
  const char *text[MAXL], *sym[MAXL];
  PLINT n = 0;
  for (size_t j = 0; j < p->xy.n_series && n < MAXL; j++) {
    const rp_figure_series *s = &p->xy.series[j];
    if (s->label == NULL) continue;
    PLINT col = COL_SERIES0 + (PLINT)(j % N_SERIES_COLOURS);
    if (j == 0 && L->density) {
      opt[n] = PL_LEGEND_COLOR_BOX;
    } else {
      opt[n] = (s->style == RP_FIGURE_STYLE_MARKERS ? 0 : PL_LEGEND_LINE) |
               (s->style == RP_FIGURE_STYLE_LINE ? 0 : PL_LEGEND_SYMBOL);
    }
    text[n] = s->label;
    tcol[n] = COL_FG;
    lcol[n] = col;
    lsty[n] = (PLINT)(1 + (j / N_SERIES_COLOURS) % 8);
    lwid[n] = 2.0;
    scol[n] = col;
    sscale[n] = MARKER_SCALE * text_scale_for(h);
    snum[n] = s->style == RP_FIGURE_STYLE_MARKERS ? 1 : 2;
    sym[n] = MARKERS[j % N_MARKERS];
    bcol[n] = COL_DENSITY; bpat[n] = 0; bscale[n] = 0.6; bwid[n] = 0.0;
    n++;
  }
  if (n == 0) return;
  PLFLT lw, lh;
  double vw = L->vx1 - L->vx0, vh = L->vy1 - L->vy0;
  double yoff = L->legend_below ? (XLABEL_DISP + 1.6) * h / vh : LEGEND_GAP;
  PLINT lopt = PL_LEGEND_BACKGROUND | PL_LEGEND_BOUNDING_BOX |
               (L->legend_cols > 1 ? PL_LEGEND_ROW_MAJOR : 0);
  plwidth(1.0);
  pllegend(&lw, &lh, lopt, L->legend_pos, L->legend_below ? 0.0 : LEGEND_GAP, yoff,
           L->sample_chars * h / vw, COL_BG, COL_GRID, 1, (PLINT)L->legend_rows,
           (PLINT)L->legend_cols, n, opt, 0.8, LEGEND_TEXT_SCALE * text_scale_for(h),
           LEGEND_SPACING, 0.0, tcol, text, bcol, bpat, bscale, bwid, lcol, lsty, lwid, scol,
           sscale, snum, sym);
}

typedef struct {
  double *bx, *by;           /* max series length */
  double *img, **rows;       /* density or field image */
  double *xe, *ye;           /* density cell edges */
  double *gx, *gy, **gxr, **gyr; /* field corner grids */
  double *re, *ae;           /* PPI cell edges */
} scratch;

static void draw_xy(const rp_figure_panel *p, layout *L, double h, scratch *w) {
  plsvpa(L->vx0, L->vx1, L->vy0, L->vy1);
  plwind(L->rx.lo, L->rx.hi, L->ry.lo, L->ry.hi);
  plcol0(COL_GRID);
  plwidth(1.0);
  draw_ticks(L, h, 1);
  size_t first = 0;
  if (L->density) {
    double zmax = draw_density(&p->xy.series[0], L, w->img, w->rows, w->xe, w->ye);
    L->cb_lo = 0.0;
    L->cb_hi = zmax;
    first = 1;
  }
  if (p->xy.one_to_one) {
    plcol0(COL_GUIDE);
    pllsty(2);
    plwidth(1.5);
    pljoin(L->rx.lo, L->rx.lo, L->rx.hi, L->rx.hi);
    pllsty(1);
    plwidth(1.0);
  }
  for (size_t j = first; j < p->xy.n_series; j++) draw_series(&p->xy.series[j], j, L, h, w->bx, w->by);
  draw_frame(L, h);
  if (p->xlabel != NULL) plmtex("b", XLABEL_DISP, 0.5, 0.5, p->xlabel);
  if (p->ylabel != NULL) plmtex("l", L->ydisp, 0.5, 0.5, p->ylabel);
  if (L->legend_n > 0) draw_legend(p, L, h);
  if (L->density) {
    axis_ticks_fit(L->cb_lo, L->cb_hi, 1, L->vy1 - L->vy0, h, 0, &L->tcb);
    draw_colorbar(L, h);
  }
}

/* A white box behind a short text at (x, y) world, width in mm. */
static void text_box(double x, double y, double w_mm, double h_mm, double wx, double wy) {
  PLFLT bxv[4] = {x - 0.5 * w_mm * wx, x + 0.5 * w_mm * wx, x + 0.5 * w_mm * wx, x - 0.5 * w_mm * wx};
  PLFLT byv[4] = {y - 0.5 * h_mm * wy, y - 0.5 * h_mm * wy, y + 0.5 * h_mm * wy, y + 0.5 * h_mm * wy};
  plcol0(COL_BG);
  plfill(4, bxv, byv);
}

static void draw_ppi(const rp_figure_panel *p, const layout *L, double h, scratch *w) {
  const rp_figure_ppi *q = &p->ppi;
  const double *r = q->ground_range_km != NULL ? q->ground_range_km : q->range_km;
  size_t nr = q->n_range, na = q->n_azimuth;
  double *re = w->re, *ae = w->ae;
  for (size_t i = 1; i < nr; i++) re[i] = 0.5 * (r[i - 1] + r[i]);
  re[0] = fmax(0.0, r[0] - 0.5 * (r[1] - r[0]));
  re[nr] = L->ppi_rmax;
  double u = q->azimuth_deg[0];
  for (size_t i = 1; i < na; i++) {
    double d = cw_step_deg(q->azimuth_deg[i - 1], q->azimuth_deg[i]);
    ae[i] = u + 0.5 * d;
    u += d;
  }
  ae[0] = L->ppi_a0;
  ae[na] = L->ppi_a1;
  for (size_t i = 0; i <= nr; i++) {
    w->gxr[i] = w->gx + i * (na + 1);
    w->gyr[i] = w->gy + i * (na + 1);
    for (size_t j = 0; j <= na; j++) {
      double a = ae[j] * M_PI / 180.0;
      w->gxr[i][j] = re[i] * sin(a);
      w->gyr[i][j] = re[i] * cos(a);
    }
  }
  const double below = p->scale.vmin - (p->scale.vmax - p->scale.vmin);
  for (size_t i = 0; i < nr; i++) {
    w->rows[i] = w->img + i * na;
    for (size_t j = 0; j < na; j++) {
      double v = q->values[j * nr + i];
      w->rows[i][j] = isnan(v) ? below : fmin(fmax(v, p->scale.vmin), p->scale.vmax);
    }
  }
  set_cmap1(p->scale.colormap);
  plsvpa(L->vx0, L->vx1, L->vy0, L->vy1);
  plwind(L->rx.lo, L->rx.hi, L->ry.lo, L->ry.hi);
  PLcGrid2 grid = {w->gxr, w->gyr, NULL, (PLINT)(nr + 1), (PLINT)(na + 1)};
  plimagefr((PLFLT_MATRIX)w->rows, (PLINT)nr, (PLINT)na, 0.0, (double)nr, 0.0, (double)na,
            p->scale.vmin, p->scale.vmax, p->scale.vmin, p->scale.vmax, pltr2, &grid);

  /* Range rings (labelled) and 30° spokes, thin mid grey, over the scanned sector. */
  double step = L->ring_step;
  plcol0(COL_GUIDE);
  plwidth(0.8);
  for (double rr = step; rr <= re[nr] * 1.0001; rr += step) {
    if (L->ppi_closed) plarc(0.0, 0.0, rr, rr, 0.0, 360.0, 0.0, 0);
    else plarc(0.0, 0.0, rr, rr, 90.0 - ae[na], 90.0 - ae[0], 0.0, 0);
  }
  for (int k = 0; k < 12; k++) {
    double a = 30.0 * k, ad = fmod(a - ae[0], 360.0);
    if (ad < 0.0) ad += 360.0;
    if (!L->ppi_closed && ad > ae[na] - ae[0]) continue;
    double ar = a * M_PI / 180.0;
    pljoin(re[0] * sin(ar), re[0] * cos(ar), re[nr] * sin(ar), re[nr] * cos(ar));
  }
  plwidth(1.0);
  const double wx = (L->rx.hi - L->rx.lo) / (L->vx1 - L->vx0);
  const double wy = (L->ry.hi - L->ry.lo) / (L->vy1 - L->vy0);
  double alab = (L->ppi_closed ? 45.0 : 0.5 * (ae[0] + ae[na])) * M_PI / 180.0;
  set_text_height(0.75 * h);
  for (double rr = step; rr <= re[nr] * 1.0001; rr += step) {
    char lab[32];
    snprintf(lab, sizeof lab, "%g km", rr);
    double x = rr * sin(alab), y = rr * cos(alab);
    text_box(x, y, (1.0 * text_glyphs(lab) + 1.0) * 0.75 * h, 1.5 * 0.75 * h, wx, wy);
    plcol0(COL_FG);
    plptex(x, y, 1.0, 0.0, 0.5, lab);
  }
  set_text_height(h);
  draw_frame(L, h);
  plmtex("b", XLABEL_DISP, 0.5, 0.5, p->xlabel != NULL ? p->xlabel : "east of the radar (km)");
  plmtex("l", L->ydisp, 0.5, 0.5, p->ylabel != NULL ? p->ylabel : "north of the radar (km)");
}

static void draw_rhi(const rp_figure_panel *p, const layout *L, double h, scratch *w) {
  const rp_figure_rhi *q = &p->rhi;
  size_t ng = q->n_gate, nray = q->n_ray;
  for (size_t i = 0; i <= ng; i++) {
    w->gxr[i] = w->gx + i * (nray + 1);
    w->gyr[i] = w->gy + i * (nray + 1);
    for (size_t j = 0; j <= nray; j++) {
      w->gxr[i][j] = q->corner_ground_km[j * (ng + 1) + i];
      w->gyr[i][j] = q->corner_height_km[j * (ng + 1) + i];
    }
  }
  const double below = p->scale.vmin - (p->scale.vmax - p->scale.vmin);
  for (size_t i = 0; i < ng; i++) {
    w->rows[i] = w->img + i * nray;
    for (size_t j = 0; j < nray; j++) {
      double v = q->values[j * ng + i];
      w->rows[i][j] = isnan(v) ? below : fmin(fmax(v, p->scale.vmin), p->scale.vmax);
    }
  }
  set_cmap1(p->scale.colormap);
  plsvpa(L->vx0, L->vx1, L->vy0, L->vy1);
  plwind(L->rx.lo, L->rx.hi, L->ry.lo, L->ry.hi);
  plcol0(COL_GRID);
  draw_ticks(L, h, 1);
  PLcGrid2 grid = {w->gxr, w->gyr, NULL, (PLINT)(ng + 1), (PLINT)(nray + 1)};
  plimagefr((PLFLT_MATRIX)w->rows, (PLINT)ng, (PLINT)nray, 0.0, (double)ng, 0.0, (double)nray,
            p->scale.vmin, p->scale.vmax, p->scale.vmin, p->scale.vmax, pltr2, &grid);
  draw_frame(L, h);
  plmtex("b", XLABEL_DISP, 0.5, 0.5, p->xlabel != NULL ? p->xlabel : "ground range (km)");
  plmtex("l", L->ydisp, 0.5, 0.5, p->ylabel != NULL ? p->ylabel : "height (km)");
}

/* ------------------------------------------------------------- streams */

static void silent_abort(PLCHAR_VECTOR msg) { (void)msg; }

/* Non-zero when PLplot has the device (plinit on a missing device would ask on stdin). */
static int device_available(const char *dev) {
  enum { MAXDEV = 128 };
  const char *menu[MAXDEV], *names[MAXDEV];
  const char **pm = menu, **pn = names;
  int n = MAXDEV;
  plgDevs(&pm, &pn, &n);
  for (int i = 0; i < n && i < MAXDEV; i++)
    if (names[i] != NULL && strcmp(names[i], dev) == 0) return 1;
  return 0;
}

static rp_status check_figure(const char *path, const rp_figure *fig, size_t *max_n,
                              size_t *max_cells, size_t *max_edges, rp_error *err) {
  if (fig == NULL) return rp_error_set(err, RP_EINVAL, "picture '%s': figure is NULL", path);
  if (fig->panels == NULL || fig->n_panels == 0)
    return rp_error_set(err, RP_EINVAL, "picture '%s': no panels to draw (n_panels = %zu)",
                        path, fig->n_panels);
  if (fig->ncols < 1)
    return rp_error_set(err, RP_EINVAL, "picture '%s': ncols = %d is not >= 1", path, fig->ncols);
  if (fig->n_panels > RP_FIGURE_MAX_PANELS)
    return rp_error_set(err, RP_EINVAL, "picture '%s': %zu panels, at most %d", path,
                        fig->n_panels, RP_FIGURE_MAX_PANELS);
  if (fig->width_px < RP_FIGURE_MIN_PX || fig->width_px > RP_FIGURE_MAX_PX ||
      fig->height_px < RP_FIGURE_MIN_PX || fig->height_px > RP_FIGURE_MAX_PX)
    return rp_error_set(err, RP_EINVAL, "picture '%s': size %d x %d px outside [%d, %d] px",
                        path, fig->width_px, fig->height_px, RP_FIGURE_MIN_PX, RP_FIGURE_MAX_PX);
  *max_n = *max_cells = *max_edges = 0;
  for (size_t k = 0; k < fig->n_panels; k++) {
    const rp_figure_panel *p = &fig->panels[k];
    rp_status st = RP_OK;
    size_t cells = 0, edges = 0;
    switch (p->kind) {
    case RP_FIGURE_LINES:
    case RP_FIGURE_SCATTER:
      st = check_xy(p, k, max_n, err);
      cells = 80 * 80;
      edges = 81;
      break;
    case RP_FIGURE_PPI:
      st = check_ppi(p, k, err);
      if (st == RP_OK) {
        cells = (p->ppi.n_range + 1) * (p->ppi.n_azimuth + 1);
        edges = (p->ppi.n_range > p->ppi.n_azimuth ? p->ppi.n_range : p->ppi.n_azimuth) + 1;
      }
      break;
    case RP_FIGURE_RHI:
      st = check_rhi(p, k, err);
      if (st == RP_OK) {
        cells = (p->rhi.n_gate + 1) * (p->rhi.n_ray + 1);
        edges = (p->rhi.n_gate > p->rhi.n_ray ? p->rhi.n_gate : p->rhi.n_ray) + 1;
      }
      break;
    default:
      st = rp_error_set(err, RP_EINVAL, "panel %zu: kind %d is not lines (0), scatter (1), PPI (2) "
                        "or RHI (3)", k, p->kind);
    }
    if (st != RP_OK) {
      rp_error_prefix(err, "picture '%s': ", path);
      return st;
    }
    if (cells > *max_cells) *max_cells = cells;
    if (edges > *max_edges) *max_edges = edges;
  }
  return RP_OK;
}

rp_status rp_figure_draw_temp(const char *path, const rp_figure *fig, char *tmp,
                              size_t tmp_len, rp_error *err) {
  if (tmp != NULL && tmp_len > 0) tmp[0] = '\0';
  if (path == NULL) return rp_error_set(err, RP_EINVAL, "picture path is NULL");
  if (tmp == NULL || tmp_len == 0)
    return rp_error_set(err, RP_EINVAL, "picture '%s': no buffer for the temporary name", path);
  const char *dev = NULL;
  RP_TRY(rp_figfile_device(path, &dev, err));
  size_t max_n = 0, max_cells = 0, max_edges = 0;
  RP_TRY(check_figure(path, fig, &max_n, &max_cells, &max_edges, err));

  /* Page, title band and grid (mm). */
  size_t nc = (size_t)fig->ncols < fig->n_panels ? (size_t)fig->ncols : fig->n_panels;
  size_t nrow = (fig->n_panels + nc - 1) / nc;
  double pw = fig->width_px * 25.4 / 72.0, ph = fig->height_px * 25.4 / 72.0;
  double h = text_height_mm(pw / (double)nc, ph / (double)nrow, pw, ph);
  double band = (fig->title != NULL ? 2.0 : 0.0) + (fig->subtitle != NULL ? 1.6 : 0.0);
  if (band > 0.0) band += 0.6;
  double cw = pw / (double)nc, ch = (ph - band * 1.1 * h) / (double)nrow;
  if (cw < 16.0 * h || ch < 10.0 * h)
    return rp_error_set(err, RP_EINVAL, "picture '%s': %zu x %zu panels do not fit in %d x %d px",
                        path, nrow, nc, fig->width_px, fig->height_px);

  rp_status st = RP_OK;
  layout *lay = calloc(fig->n_panels, sizeof *lay);
  if (lay == NULL) return rp_error_set(err, RP_ENOMEM, "picture '%s': no memory for the layout", path);
  for (size_t k = 0; k < fig->n_panels && st == RP_OK; k++) {
    const rp_figure_panel *p = &fig->panels[k];
    size_t r = k / nc, c = k % nc;
    double cx0 = (double)c * cw, cy0 = ph - band * 1.1 * h - (double)(r + 1) * ch;
    if (p->kind == RP_FIGURE_LINES || p->kind == RP_FIGURE_SCATTER)
      st = layout_xy(p, k, cx0, cy0, cw, ch, h, &lay[k], err);
    else
      st = layout_field(p, k, cx0, cy0, cw, ch, h, &lay[k], err);
    if (st != RP_OK) rp_error_prefix(err, "picture '%s': ", path);
  }
  if (st != RP_OK) {
    free(lay);
    return st;
  }

  scratch w = {0};
  size_t nb = max_n > 0 ? max_n : 1;
  w.bx = malloc(nb * sizeof *w.bx);
  w.by = malloc(nb * sizeof *w.by);
  w.img = malloc(max_cells * sizeof *w.img);
  w.rows = malloc(max_edges * sizeof *w.rows);
  w.xe = malloc(max_edges * sizeof *w.xe);
  w.ye = malloc(max_edges * sizeof *w.ye);
  w.gx = malloc(max_cells * sizeof *w.gx);
  w.gy = malloc(max_cells * sizeof *w.gy);
  w.gxr = malloc(max_edges * sizeof *w.gxr);
  w.gyr = malloc(max_edges * sizeof *w.gyr);
  w.re = malloc(max_edges * sizeof *w.re);
  w.ae = malloc(max_edges * sizeof *w.ae);
  rp_figfile ff;
  int opened = 0;
  PLINT old_stream = 0;
  if (!w.bx || !w.by || !w.img || !w.rows || !w.xe || !w.ye || !w.gx || !w.gy || !w.gxr ||
      !w.gyr || !w.re || !w.ae) {
    st = rp_error_set(err, RP_ENOMEM, "picture '%s': no memory for the drawing buffers", path);
    goto done;
  }
  if (!device_available(dev)) {
    st = rp_error_set(err, RP_EPLOT, "picture '%s': PLplot has no '%s' device (Debian package "
                      "plplot-driver-cairo)", path, dev);
    goto done;
  }
  st = rp_figfile_open(path, &ff, err);
  if (st != RP_OK) goto done;
  opened = 1;
  plgstrm(&old_stream);
  plsabort(silent_abort);
  PLINT sn = -1;
  plmkstrm(&sn);
  if (sn < 0) {
    plsabort(NULL);
    rp_figfile_abandon(&ff);
    opened = 0;
    st = rp_error_set(err, RP_EPLOT, "picture '%s': PLplot could not open a new stream (all in use)",
                      path);
    goto done;
  }
  {
    char geometry[32];
    snprintf(geometry, sizeof geometry, "%dx%d", fig->width_px, fig->height_px);
    plsdev(dev);
    plsfile(ff.fp);
    plsetopt("geometry", geometry);
    plscmap0n(N_COL0);
    plscol0(COL_BG, 255, 255, 255);
    plscol0(COL_FG, 0, 0, 0);
    plscol0(COL_GRID, 0xDD, 0xDD, 0xDD);
    plscol0(COL_GUIDE, 0x66, 0x66, 0x66);
    {
      double c[3];
      cmap_entry(RP_FIGURE_CMAP_VIRIDIS, 150, c);
      plscol0(COL_DENSITY, to_byte(c[0]), to_byte(c[1]), to_byte(c[2]));
    }
    for (int i = 0; i < N_SERIES_COLOURS; i++)
      plscol0(COL_SERIES0 + i, SERIES_RGB[i][0], SERIES_RGB[i][1], SERIES_RGB[i][2]);
    plinit();
    pladv(0);
    set_text_height(h);
    for (size_t k = 0; k < fig->n_panels; k++) {
      const rp_figure_panel *p = &fig->panels[k];
      layout *L = &lay[k];
      set_text_height(h);
      if (p->kind == RP_FIGURE_PPI) draw_ppi(p, L, h, &w);
      else if (p->kind == RP_FIGURE_RHI) draw_rhi(p, L, h, &w);
      else draw_xy(p, L, h, &w);
      size_t c = k % nc;
      double cell_l = (double)c * cw, cell_r = cell_l + cw;
      double avail = 2.0 * fmin(0.5 * (L->vx0 + L->vx1) - cell_l, cell_r - 0.5 * (L->vx0 + L->vx1)) - h;
      plsvpa(L->vx0, L->vx1, L->vy0, L->vy1);
      draw_titles(p->title, p->subtitle, avail, h);
      if (L->cbar && p->kind != RP_FIGURE_LINES && p->kind != RP_FIGURE_SCATTER) draw_colorbar(L, h);
    }
    if (band > 0.0) {
      plsvpa(0.5 * h, pw - 0.5 * h, ph - band * 1.1 * h, ph - 0.3 * h);
      plwind(0.0, 1.0, 0.0, 1.0);
      double disp = -0.2;
      if (fig->title != NULL) {
        double s = fmin(1.2, (pw - 2.0 * h) / (GLYPH_W * h * fmax(1.0, text_glyphs(fig->title))));
        set_text_height(h * s);
        disp += 1.1;
        plmtex("t", -disp, 0.5, 0.5, fig->title);
        disp = (disp + 0.5) * s;
        set_text_height(h);
      }
      if (fig->subtitle != NULL) {
        double s = fmin(0.95, (pw - 2.0 * h) / (GLYPH_W * h * fmax(1.0, text_glyphs(fig->subtitle))));
        set_text_height(h * s);
        plmtex("t", -(disp / s + 1.0), 0.5, 0.5, fig->subtitle);
        set_text_height(h);
      }
    }
    plend1();
    plsstrm(old_stream);
    plsabort(NULL);
  }
  st = rp_figfile_finish(path, &ff, err);
  if (st == RP_OK) {
    if (strlen(ff.tmp) >= tmp_len) {
      rp_figfile_abandon(&ff);
      st = rp_error_set(err, RP_EINVAL, "picture '%s': temporary name does not fit in %zu bytes",
                        path, tmp_len);
    } else {
      strcpy(tmp, ff.tmp);
    }
  }
  opened = 0;

done:
  if (opened) rp_figfile_abandon(&ff);
  free(lay);
  free(w.bx); free(w.by); free(w.img); free(w.rows); free(w.xe); free(w.ye);
  free(w.gx); free(w.gy); free(w.gxr); free(w.gyr); free(w.re); free(w.ae);
  return st;
}

rp_status rp_figure_write(const char *path, const rp_figure *fig, rp_error *err) {
  char tmp[RP_FIGFILE_PATH_MAX];
  RP_TRY(rp_figure_draw_temp(path, fig, tmp, sizeof tmp, err));
  return rp_figure_commit(tmp, path, err);
}
