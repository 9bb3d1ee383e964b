/* plot.c — pictures through PLplot's cairo drivers: multi-panel line/scatter figures
 * and polar (PPI) fields, as PNG, SVG or PDF.
 *
 * Method (docs/method.md §11):
 *   - One figure = one fresh PLplot stream (plmkstrm, plinit ... plend1), one page,
 *     drawn to a temporary file created by us (O_EXCL, tempfile.c) in the destination
 *     folder, then renamed: the output appears whole or not at all. Creating the file
 *     ourselves also keeps PLplot from its fatal "cannot open file" path, which exits
 *     the process.
 *   - Panels are laid out with plsvpa viewports in page millimetres after one pladv(0),
 *     never with plssub (plcolorbar is misplaced in plssub subpages in PLplot 5.15,
 *     /work/shared/deps.md §PLplot). Margins are counted in character heights, and the
 *     character height follows the panel size; tick labels are formatted here
 *     (plslabelfunc) so that their width is known when the margins are set.
 *   - Log axes: PLplot draws log axes of log10-transformed data; the transform is done
 *     here into a scratch buffer.
 *   - Series colours: Okabe & Ito (2008) colour-blind-safe palette, with a marker shape
 *     per series. Field colour maps: viridis (van der Walt & Smith 2015; 10 anchors,
 *     linear in sRGB) and a diverging map linear in CIELAB between
 *     L*a*b* = (40, 17, -52) blue, (88, 0, 0) grey and (40, 45, 31.5) red, converted to
 *     sRGB with the CIE 1976 L*a*b* inverse (CIE 15:2004, D65 white) and the sRGB
 *     matrix and transfer function of IEC 61966-2-1.
 *   - PPI: cell-centred values drawn with plimagefr + pltr2 on a grid of cell corners
 *     (x = r sin(az), y = r cos(az)); NaN cells are given a value below the plotted
 *     range, which plimagefr leaves undrawn.
 *
 * Invariants: this code never prints; PLplot's non-fatal messages (plabort) are
 * silenced while a figure is drawn and the default handler is restored afterwards
 * (PLplot still writes a few messages with fprintf, e.g. when no stream is free).
 * Conditions under which PLplot would exit the process (file cannot be opened) or ask
 * on stdin (unknown device) are checked before plinit.
 * Not re-entrant: PLplot's stream table and abort handler are process-wide. */
#include "rainprint/plot.h"

#include <errno.h>
#include <limits.h>
#include <math.h>
#include <plplot.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>
#include <sys/stat.h>
#include <unistd.h>

#include "io/tempfile.h"

#define CMAP_N 256
#define PATH_BUF 4096

/* cmap0 indices used by the figures. */
enum {
  COL_BG = 0,
  COL_FG = 1,
  COL_GRID = 2,
  COL_GUIDE = 3,
  COL_SERIES0 = 4,
  N_SERIES_COLOURS = 8,
  N_COL0 = COL_SERIES0 + N_SERIES_COLOURS
};

/* Okabe & Ito (2008), "Color Universal Design", the eight-colour set, reordered so that
 * the first three (one line per radar band) are the most distinct. Yellow is last: it is
 * faint on white. */
static const unsigned char SERIES_RGB[N_SERIES_COLOURS][3] = {
    {0x00, 0x72, 0xB2}, /* blue */
    {0xD5, 0x5E, 0x00}, /* vermillion */
    {0x00, 0x9E, 0x73}, /* bluish green */
    {0xCC, 0x79, 0xA7}, /* reddish purple */
    {0xE6, 0x9F, 0x00}, /* orange */
    {0x56, 0xB4, 0xE9}, /* sky blue */
    {0x00, 0x00, 0x00}, /* black */
    {0xF0, 0xE4, 0x42}, /* yellow */
};

/* Marker size relative to the text height. */
static const double MARKER_SCALE = 0.6;

/* Marker glyphs (DejaVu Sans has them all), one per series, cycled. */
static const char *const MARKERS[] = {"●", "■", "▲", "◆", "▼", "★"};
#define N_MARKERS (sizeof MARKERS / sizeof MARKERS[0])

/* Viridis sampled at 10 evenly spaced points (anchors as in /work/shared/deps.md). */
static const unsigned char VIRIDIS_ANCHORS[10][3] = {
    {0x44, 0x01, 0x54}, {0x48, 0x28, 0x78}, {0x3E, 0x4A, 0x89}, {0x31, 0x68, 0x8E},
    {0x26, 0x82, 0x8E}, {0x1F, 0x9E, 0x89}, {0x35, 0xB7, 0x79}, {0x6D, 0xCD, 0x59},
    {0xB4, 0xDE, 0x2C}, {0xFD, 0xE7, 0x25}};

/* Diverging anchors in CIE L*a*b* (D65): blue, neutral grey, red. Both ends have
 * L* = 40 and chroma about 55, so the two arms are symmetric in lightness and
 * saturation; the centre is a light grey (not white, so that it cannot be mistaken for
 * a blank NaN cell). All 256 entries are inside the sRGB gamut. */
static const double DIVERGING_LAB[3][3] = {
    {40.0, 17.0, -52.0}, {88.0, 0.0, 0.0}, {40.0, 45.0, 31.5}};

/* ---------------------------------------------------------------- colour maps */

/* sRGB transfer function (IEC 61966-2-1) of a linear component, result in [0, 1]. */
static double srgb_encode(double c) {
  if (c <= 0.0) return 0.0;
  if (c >= 1.0) return 1.0;
  return c <= 0.0031308 ? 12.92 * c : 1.055 * pow(c, 1.0 / 2.4) - 0.055;
}

/* CIE L*a*b* (D65 white) -> sRGB in [0, 1] (CIE 15:2004 inverse, IEC 61966-2-1 matrix). */
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

/* Entry k (0..CMAP_N-1) of a colour map as sRGB components in [0, 1]. */
static void cmap_entry(int colormap, int k, double rgb[3]) {
  double t = (double)k / (double)(CMAP_N - 1);
  if (colormap == RP_PLOT_CMAP_SEQUENTIAL) {
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

rp_status rp_plot_colormap_rgb(int colormap, double t, unsigned char rgb[3],
                               rp_error *err) {
  if (colormap != RP_PLOT_CMAP_SEQUENTIAL && colormap != RP_PLOT_CMAP_DIVERGING)
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

/* --------------------------------------------------------- files and streams */

/* PLplot device for the extension of path. */
static rp_status device_for_path(const char *path, const char **dev, rp_error *err) {
  const char *dot = strrchr(path, '.');
  const char *slash = strrchr(path, '/');
  if (dot != NULL && (slash == NULL || dot > slash)) {
    if (strcasecmp(dot, ".png") == 0) { *dev = "pngcairo"; return RP_OK; }
    if (strcasecmp(dot, ".svg") == 0) { *dev = "svgcairo"; return RP_OK; }
    if (strcasecmp(dot, ".pdf") == 0) { *dev = "pdfcairo"; return RP_OK; }
  }
  return rp_error_set(err, RP_EINVAL,
                      "picture '%s': unknown extension (use .png, .svg or .pdf)", path);
}

static rp_status check_size(int width_px, int height_px, rp_error *err) {
  if (width_px < RP_PLOT_MIN_PX || width_px > RP_PLOT_MAX_PX || height_px < RP_PLOT_MIN_PX ||
      height_px > RP_PLOT_MAX_PX)
    return rp_error_set(err, RP_EINVAL, "picture size %d x %d px outside [%d, %d] px",
                        width_px, height_px, RP_PLOT_MIN_PX, RP_PLOT_MAX_PX);
  return RP_OK;
}

/* Move the finished temporary file over path; on any failure remove it. */
static rp_status temp_commit(const char *tmp, const char *path, rp_error *err) {
  struct stat st;
  if (stat(tmp, &st) != 0 || st.st_size <= 0) {
    unlink(tmp);
    return rp_error_set(err, RP_EPLOT, "picture '%s': PLplot wrote an empty file", path);
  }
  return rp_tempfile_commit("picture", tmp, path, err);
}

static void silent_abort(PLCHAR_VECTOR msg) { (void)msg; }

/* Non-zero when PLplot has the device: plinit on a missing device would ask on stdin. */
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

/* Create the temporary file tmp (n bytes) beside path, closed again (PLplot opens it by
 * name), and open a fresh stream drawing one page of width x height to it on device
 * dev, with our colour table. *old_stream receives the caller's stream. On failure
 * the temporary file is removed. */
static rp_status figure_begin(const char *dev, const char *path, char *tmp, size_t n,
                              int width_px, int height_px, PLINT *old_stream, rp_error *err) {
  int fd = -1;
  RP_TRY(rp_tempfile_create("picture", path, tmp, n, &fd, err));
  close(fd);
  if (!device_available(dev)) {
    unlink(tmp);
    return rp_error_set(err, RP_EPLOT,
                        "picture '%s': PLplot has no '%s' device (Debian package "
                        "plplot-driver-cairo)", path, dev);
  }
  plgstrm(old_stream);
  plsabort(silent_abort);
  PLINT s = -1;
  plmkstrm(&s);
  if (s < 0) {
    plsabort(NULL);
    unlink(tmp);
    return rp_error_set(err, RP_EPLOT, "picture '%s': PLplot could not open a new stream "
                        "(all in use)", path);
  }
  char geometry[32];
  snprintf(geometry, sizeof geometry, "%dx%d", width_px, height_px);
  plsdev(dev);
  plsfnam(tmp);
  plsetopt("geometry", geometry);
  plscmap0n(N_COL0);
  plscol0(COL_BG, 255, 255, 255);
  plscol0(COL_FG, 0, 0, 0);
  plscol0(COL_GRID, 0xDD, 0xDD, 0xDD);
  plscol0(COL_GUIDE, 0x66, 0x66, 0x66);
  for (int i = 0; i < N_SERIES_COLOURS; i++)
    plscol0(COL_SERIES0 + i, SERIES_RGB[i][0], SERIES_RGB[i][1], SERIES_RGB[i][2]);
  plinit();
  pladv(0);
  plcol0(COL_FG);
  return RP_OK;
}

static void figure_end(PLINT old_stream) {
  plend1();
  plsstrm(old_stream);
  plsabort(NULL);
}

/* Approximate number of glyphs in a PLplot string: escapes (#u, #d, #b, #g?, #(nnn))
 * are counted as what they show; UTF-8 continuation bytes are not counted. */
static double text_glyphs(const char *s) {
  double n = 0.0;
  if (s == NULL) return 0.0;
  for (const unsigned char *p = (const unsigned char *)s; *p; p++) {
    if (*p == '#' && p[1] != '\0') {
      p++;
      if (*p == '#') n += 1.0;
      else if (*p == 'g' && p[1] != '\0') { p++; n += 1.0; }
      else if (*p == '(') { while (*p && *p != ')') p++; if (!*p) break; n += 1.0; }
      else if (*p == 'f' && p[1] != '\0') p++; /* font change #f?: no glyph */
      /* #u, #d, #b: no glyph */
      continue;
    }
    if ((*p & 0xC0) != 0x80) n += 1.0;
  }
  return n;
}

/* Text height (mm) for a cell of cw x ch mm on a page of pw x ph mm: proportional to
 * the smaller cell side, at most 2 % of the smaller page side and never below 11 px
 * (1 px = 1 pt = 25.4/72 mm on the cairo devices). Tuned by eye on 400 x 300 to
 * 1600 x 1000 px figures of 1 to 6 panels. */
static const double MIN_TEXT_MM = 11.0 * 25.4 / 72.0;

static double text_height_mm(double cw, double ch, double pw, double ph) {
  double h = fmin(0.022 * fmin(cw, ch), 0.02 * fmin(pw, ph));
  return fmax(MIN_TEXT_MM, h);
}

/* Scale factor, relative to the device's default character height, that gives text of
 * height h_mm (plschr and pllegend's text_scale are relative to that default). */
static double text_scale_for(double h_mm) {
  PLFLT def, cur;
  plgchr(&def, &cur);
  return h_mm / def;
}

/* Set the character height to h_mm. */
static void set_text_height(double h_mm) { plschr(0.0, text_scale_for(h_mm)); }

/* ------------------------------------------------------------------- panels */

typedef struct {
  double lo, hi;
} range1;

static rp_status check_panel(const rp_plot_panel *p, size_t k, size_t *max_n, rp_error *err) {
  if (p->n_series > 0 && p->series == NULL)
    return rp_error_set(err, RP_EINVAL, "panel %zu: series is NULL with n_series = %zu", k,
                        p->n_series);
  if (p->equal_axes_with_diagonal && (p->log_x != 0) != (p->log_y != 0))
    return rp_error_set(err, RP_EINVAL,
                        "panel %zu: 1:1 panel needs both axes linear or both log "
                        "(log_x = %d, log_y = %d)", k, p->log_x, p->log_y);
  for (size_t j = 0; j < p->n_series; j++) {
    const rp_plot_series *s = &p->series[j];
    if (s->n > 0 && (s->x == NULL || s->y == NULL))
      return rp_error_set(err, RP_EINVAL, "panel %zu series %zu: x or y is NULL with n = %zu",
                          k, j, s->n);
    if (s->n > (size_t)INT_MAX)
      return rp_error_set(err, RP_EINVAL, "panel %zu series %zu: n = %zu points is too many",
                          k, j, s->n);
    if (s->style < RP_PLOT_LINE || s->style > RP_PLOT_LINE_MARKERS)
      return rp_error_set(err, RP_EINVAL,
                          "panel %zu series %zu: style %d is not 0 (line), 1 (markers) or "
                          "2 (line+markers)", k, j, s->style);
    for (size_t i = 0; i < s->n; i++) {
      double v[2] = {s->x[i], s->y[i]};
      for (int a = 0; a < 2; a++) {
        const char *ax = a == 0 ? "x" : "y";
        int log_ax = a == 0 ? p->log_x : p->log_y;
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

/* Copy series values into bx, by (log10 on log axes; NaN stays NaN). */
static void transform_series(const rp_plot_panel *p, const rp_plot_series *s, double *bx,
                             double *by) {
  for (size_t i = 0; i < s->n; i++) {
    bx[i] = p->log_x ? log10(s->x[i]) : s->x[i];
    by[i] = p->log_y ? log10(s->y[i]) : s->y[i];
  }
}

static int point_ok(double x, double y) { return isfinite(x) && isfinite(y); }

/* Axis range with a margin; log axes (values are log10) span at least two decade
 * marks so that PLplot can label them. */
static range1 pad_range(double lo, double hi, int is_log) {
  range1 r;
  if (!(lo <= hi)) { lo = 0.0; hi = 1.0; }
  if (hi - lo <= 1e-12 * fmax(1.0, fabs(hi))) {
    double d = is_log ? 0.5 : (lo != 0.0 ? 0.1 * fabs(lo) : 1.0);
    lo -= d;
    hi += d;
  }
  double pad = 0.04 * (hi - lo);
  r.lo = lo - pad;
  r.hi = hi + pad;
  if (is_log) {
    /* PLplot labels decades only: make sure two decade marks are in range, extending
     * the side that needs less (in decades). */
    double marks = floor(r.hi) - ceil(r.lo) + 1.0;
    if (marks < 1.0) {
      r.lo = floor(r.lo);
      r.hi = ceil(r.hi);
    } else if (marks < 2.0) {
      if (r.lo - floor(r.lo) < ceil(r.hi) - r.hi) r.lo = floor(r.lo);
      else r.hi = ceil(r.hi);
    }
  }
  return r;
}

/* Legend layout, in mm, estimated from the text (pllegend draws, it cannot measure). */
typedef struct {
  int n;            /* entries */
  double w_mm, h_mm;
} legend_size;

/* Average advance of a DejaVu Sans glyph in units of PLplot's character height: the
 * cairo devices draw a font whose em is larger than PLplot's nominal character height;
 * measured on rendered figures, digits advance 0.82 h and mixed text about 0.85 h. */
static const double GLYPH_W = 0.85;

static const double LEGEND_TEXT_SCALE = 0.9;   /* legend text, relative to h */
/* Length of the legend's sample, character heights: room for a line with two markers,
 * or for a single marker when no entry has a line. */
static double legend_sample_chars(const rp_plot_panel *p) {
  for (size_t j = 0; j < p->n_series; j++)
    if (p->series[j].label != NULL && p->series[j].style != RP_PLOT_MARKERS) return 3.5;
  return 1.2;
}

static const double LEGEND_SPACING = 1.9;      /* line spacing, char heights */
static const double LEGEND_GAP = 0.012;        /* offset from the viewport edge, fraction */

static legend_size legend_estimate(const rp_plot_panel *p, double h_mm) {
  legend_size ls = {0, 0.0, 0.0};
  double wmax = 0.0;
  for (size_t j = 0; j < p->n_series; j++) {
    if (p->series[j].label == NULL) continue;
    ls.n++;
    wmax = fmax(wmax, text_glyphs(p->series[j].label));
  }
  ls.w_mm = h_mm * (legend_sample_chars(p) + 2.0 + GLYPH_W * LEGEND_TEXT_SCALE * wmax);
  ls.h_mm = h_mm * (LEGEND_SPACING * ls.n + 0.6);
  return ls;
}

/* Count drawn points (and points along drawn lines) inside a world-coordinate box. */
static size_t count_in_box(const rp_plot_panel *p, double *bx, double *by, double x0,
                           double x1, double y0, double y1) {
  size_t count = 0;
  for (size_t j = 0; j < p->n_series; j++) {
    const rp_plot_series *s = &p->series[j];
    transform_series(p, s, bx, by);
    for (size_t i = 0; i < s->n; i++) {
      if (!point_ok(bx[i], by[i])) continue;
      if (bx[i] >= x0 && bx[i] <= x1 && by[i] >= y0 && by[i] <= y1) count++;
      if (s->style != RP_PLOT_MARKERS && i + 1 < s->n && point_ok(bx[i + 1], by[i + 1])) {
        for (int q = 1; q < 8; q++) {
          double w = q / 8.0;
          double xq = bx[i] + w * (bx[i + 1] - bx[i]), yq = by[i] + w * (by[i + 1] - by[i]);
          if (xq >= x0 && xq <= x1 && yq >= y0 && yq <= y1) count++;
        }
      }
    }
  }
  return count;
}

/* Draw the finite runs of one series. */
static void draw_series(const rp_plot_series *s, const double *bx, const double *by,
                        size_t j, double h_mm) {
  plcol0(COL_SERIES0 + (PLINT)(j % N_SERIES_COLOURS));
  pllsty((PLINT)(1 + (j / N_SERIES_COLOURS) % 8));
  size_t i = 0;
  while (i < s->n) {
    while (i < s->n && !point_ok(bx[i], by[i])) i++;
    size_t start = i;
    while (i < s->n && point_ok(bx[i], by[i])) i++;
    if (i == start) break;
    PLINT m = (PLINT)(i - start);
    if (s->style != RP_PLOT_MARKERS) {
      plwidth(2.0);
      if (m >= 2) plline(m, bx + start, by + start);
    }
    if (s->style != RP_PLOT_LINE || m == 1) {
      set_text_height(MARKER_SCALE * h_mm);
      plstring(m, bx + start, by + start, MARKERS[j % N_MARKERS]);
      set_text_height(h_mm);
    }
  }
  pllsty(1);
  plwidth(1.0);
}

static void draw_legend(const rp_plot_panel *p, PLINT position, double vp_w_mm, double h_mm) {
  enum { MAXL = 64 };
  PLINT opt[MAXL], tcol[MAXL], lcol[MAXL], lsty[MAXL], scol[MAXL], snum[MAXL];
  PLINT bcol[MAXL], bpat[MAXL];
  PLFLT lwid[MAXL], sscale[MAXL], bscale[MAXL], bwid[MAXL];
  const char *text[MAXL], *sym[MAXL];
  PLINT n = 0;
  for (size_t j = 0; j < p->n_series && n < MAXL; j++) {
    const rp_plot_series *s = &p->series[j];
    if (s->label == NULL) continue;
    PLINT col = COL_SERIES0 + (PLINT)(j % N_SERIES_COLOURS);
    opt[n] = (s->style == RP_PLOT_MARKERS ? 0 : PL_LEGEND_LINE) |
             (s->style == RP_PLOT_LINE ? 0 : PL_LEGEND_SYMBOL);
    text[n] = s->label;
    tcol[n] = COL_FG;
    lcol[n] = col;
    lsty[n] = (PLINT)(1 + (j / N_SERIES_COLOURS) % 8);
    lwid[n] = 2.0;
    scol[n] = col;
    sscale[n] = MARKER_SCALE * text_scale_for(h_mm);
    snum[n] = s->style == RP_PLOT_MARKERS ? 1 : 2;
    sym[n] = MARKERS[j % N_MARKERS];
    bcol[n] = 0; bpat[n] = 0; bscale[n] = 0.0; bwid[n] = 0.0;
    n++;
  }
  if (n == 0) return;
  PLFLT lw, lh;
  plwidth(1.0);
  pllegend(&lw, &lh, PL_LEGEND_BACKGROUND | PL_LEGEND_BOUNDING_BOX, position, LEGEND_GAP,
           LEGEND_GAP, legend_sample_chars(p) * h_mm / vp_w_mm, COL_BG, COL_GRID, 1, 0, 0, n,
           opt, 0.8, LEGEND_TEXT_SCALE * text_scale_for(h_mm), LEGEND_SPACING, 0.0, tcol, text, bcol, bpat, bscale, bwid, lcol,
           lsty, lwid, scol, sscale, snum, sym);
}

/* ---------------------------------------------------------------- axis ticks */

/* Ticks of one axis in plotting coordinates (log10 values on a log axis). We choose the
 * step and format the labels ourselves (plslabelfunc) so that the width of the widest
 * label is known when the margins are laid out. */
typedef struct {
  int is_log;
  double lo, hi;
  double step;  /* major tick step (decades on a log axis) */
  int decimals; /* linear axes: digits after the point (of the mantissa if sci) */
  int sci;      /* linear axes: labels as m×10^exp10 */
  int exp10;
  int label125; /* log axes spanning few decades: also label 2 and 5 x 10^k */
} axis_ticks;

static const double LOG125[2] = {0.30102999566398120, 0.69897000433601886}; /* log10 2, 5 */

typedef struct {
  axis_ticks x, y;
} tick_pair;

/* A step of 1, 2 or 5 x 10^k giving about `target` intervals over span. */
static double nice_step(double span, double target) {
  double raw = span / target;
  double e = pow(10.0, floor(log10(raw)));
  double m = raw / e;
  return (m < 1.5 ? 1.0 : m < 3.5 ? 2.0 : m < 7.5 ? 5.0 : 10.0) * e;
}

static void axis_setup(axis_ticks *t, double lo, double hi, int is_log, double len_mm,
                       double h_mm) {
  /* About one labelled tick per 9 character heights, 3 to 8 of them. */
  double target = fmin(8.0, fmax(3.0, len_mm / (9.0 * h_mm)));
  t->is_log = is_log;
  t->lo = lo;
  t->hi = hi;
  t->sci = 0;
  t->exp10 = 0;
  t->label125 = is_log && hi - lo <= 2.2;
  if (is_log) {
    t->step = fmax(1.0, ceil((hi - lo) / target));
    t->decimals = 0;
  } else {
    t->step = nice_step(hi - lo, target);
    /* Very large or very small numbers get a power of ten instead of many digits. */
    double amax = fmax(fabs(lo), fabs(hi));
    if (amax >= 1e5 || amax < 1e-3) {
      t->sci = 1;
      t->exp10 = (int)floor(log10(amax));
    }
    double unit = t->step / pow(10.0, t->exp10);
    t->decimals = (int)fmax(0.0, -floor(log10(unit) + 1e-9));
  }
}

static void format_tick(const axis_ticks *t, double v, char *buf, size_t n) {
  if (t->is_log) {
    /* v = log10(m 10^k) with m in {1, 2, 5}: plain decimals from 0.001 to 50000,
     * powers of ten beyond. */
    double k = floor(v + 1e-9);
    double m = round(pow(10.0, v - k));
    if (k >= -3.0 && k <= 4.0)
      snprintf(buf, n, "%.*f", k < 0.0 ? (int)-k : 0, m * pow(10.0, k));
    else if (m == 1.0)
      snprintf(buf, n, "10#u%d#d", (int)k);
    else
      snprintf(buf, n, "%g×10#u%d#d", m, (int)k);
  } else {
    if (fabs(v) < 1e-9 * t->step) v = 0.0; /* no "-0" */
    if (t->sci && v != 0.0)
      snprintf(buf, n, "%.*f×10#u%d#d", t->decimals, v / pow(10.0, t->exp10), t->exp10);
    else
      snprintf(buf, n, "%.*f", t->sci ? 0 : t->decimals, v);
  }
}

static void tick_label_cb(PLINT axis, PLFLT value, PLCHAR_NC_VECTOR label, PLINT length,
                          PLPointer data) {
  const tick_pair *tp = data;
  format_tick(axis == PL_X_AXIS ? &tp->x : &tp->y, value, label,
              length > 0 ? (size_t)length : 0);
}

/* Width, in glyphs, of the widest tick label of t. */
static double widest_tick(const axis_ticks *t) {
  double w = 1.0;
  double first = ceil(t->lo / t->step - 1e-9) * t->step;
  for (int k = 0; k < 64; k++) {
    double v = first + k * t->step;
    if (v > t->hi + 1e-9 * t->step) break;
    char buf[64];
    format_tick(t, v, buf, sizeof buf);
    /* superscripts are smaller: count their glyphs as 0.7 */
    double g = text_glyphs(buf);
    const char *sup = strstr(buf, "#u");
    if (sup != NULL) g -= 0.3 * text_glyphs(sup);
    w = fmax(w, g);
    for (int q = 0; t->label125 && q < 2; q++) {
      double u = floor(v) + LOG125[q] - 1.0; /* the decade below v, then v's own */
      for (int r = 0; r < 2; r++, u += 1.0) {
        if (u < t->lo || u > t->hi) continue;
        format_tick(t, u, buf, sizeof buf);
        w = fmax(w, text_glyphs(buf));
      }
    }
  }
  return w;
}

/* Labels at 2 and 5 x 10^k on a log axis (PLplot labels decades only), where PLplot
 * puts its own numeric labels: 1.5 character heights below the frame, or right-
 * justified 0.5 character heights left of it (measured on PLplot 5.15 output). */
static void label_125(const axis_ticks *t, int is_x) {
  if (!t->label125) return;
  for (double k = floor(t->lo); k <= t->hi; k += 1.0) {
    for (int q = 0; q < 2; q++) {
      double u = k + LOG125[q];
      if (u < t->lo || u > t->hi) continue;
      char buf[64];
      format_tick(t, u, buf, sizeof buf);
      double pos = (u - t->lo) / (t->hi - t->lo);
      if (is_x) plmtex("b", 1.5, pos, 0.5, buf);
      else plmtex("lv", 0.5, pos, 1.0, buf);
    }
  }
}

/* Draw the frame, ticks and tick labels of the current viewport. */
static void draw_axes(const tick_pair *tp) {
  char xopt[16], yopt[16];
  snprintf(xopt, sizeof xopt, "bcnsto%s", tp->x.is_log ? "l" : "");
  snprintf(yopt, sizeof yopt, "bcnstvo%s", tp->y.is_log ? "l" : "");
  plslabelfunc(tick_label_cb, (PLPointer)tp);
  plbox(xopt, tp->x.step, 0, yopt, tp->y.step, 0);
  plslabelfunc(NULL, NULL);
  label_125(&tp->x, 1);
  label_125(&tp->y, 0);
}

static void draw_grid(const tick_pair *tp) {
  char xopt[16], yopt[16];
  snprintf(xopt, sizeof xopt, "g%s", tp->x.is_log ? "l" : "");
  snprintf(yopt, sizeof yopt, "g%s", tp->y.is_log ? "l" : "");
  plbox(xopt, tp->x.step, 0, yopt, tp->y.step, 0);
}

/* Displacement of the x-axis label below the viewport, character heights. */
static const double XLABEL_DISP = 3.6;

/* Left margin (character heights) for y tick labels of width wy glyphs and the
 * displacement of the y-axis label. */
static double ylabel_disp(double wy) { return 1.2 + GLYPH_W * wy + 1.0; }

/* Write a title above the viewport, shrunk if it is wider than avail_mm. */
static void draw_title(const char *title, double avail_mm, double h_mm) {
  double w = GLYPH_W * h_mm * text_glyphs(title);
  double scale = w > avail_mm ? avail_mm / w : 1.0;
  set_text_height(h_mm * scale);
  plmtex("t", 1.3 / scale, 0.5, 0.5, title);
  set_text_height(h_mm);
}

/* Lay out and draw panel k in its grid cell (mm, page coordinates). */
static void draw_panel(const rp_plot_panel *p, double cx0, double cy0, double cw, double ch,
                       double h_mm, double *bx, double *by) {
  set_text_height(h_mm);
  /* Data ranges in plotting coordinates. */
  double xlo = INFINITY, xhi = -INFINITY, ylo = INFINITY, yhi = -INFINITY;
  for (size_t j = 0; j < p->n_series; j++) {
    transform_series(p, &p->series[j], bx, by);
    for (size_t i = 0; i < p->series[j].n; i++) {
      if (!point_ok(bx[i], by[i])) continue;
      xlo = fmin(xlo, bx[i]); xhi = fmax(xhi, bx[i]);
      ylo = fmin(ylo, by[i]); yhi = fmax(yhi, by[i]);
    }
  }
  range1 rx, ry;
  if (p->equal_axes_with_diagonal) {
    rx = pad_range(fmin(xlo, ylo), fmax(xhi, yhi), p->log_x);
    ry = rx;
  } else {
    rx = pad_range(xlo, xhi, p->log_x);
    ry = pad_range(ylo, yhi, p->log_y);
  }

  /* Margins in character heights; the left one from the widest y tick label. */
  const double mb = 5.1, mr = 1.5, mt = p->title != NULL ? 2.9 : 1.2;
  tick_pair tp;
  axis_setup(&tp.y, ry.lo, ry.hi, p->log_y, ch - (mb + mt) * h_mm, h_mm);
  double ydisp = ylabel_disp(widest_tick(&tp.y));
  double ml = ydisp + (p->ylabel != NULL ? 0.9 : -0.5);
  double vx0 = cx0 + ml * h_mm, vx1 = cx0 + cw - mr * h_mm;
  double vy0 = cy0 + mb * h_mm, vy1 = cy0 + ch - mt * h_mm;

  /* Legend: the emptiest inside corner, or outside on the right when all have data. */
  legend_size ls = legend_estimate(p, h_mm);
  PLINT position = PL_POSITION_INSIDE | PL_POSITION_TOP | PL_POSITION_RIGHT |
                   PL_POSITION_VIEWPORT;
  if (ls.n > 0) {
    static const PLINT corners[4] = {PL_POSITION_TOP | PL_POSITION_RIGHT,
                                     PL_POSITION_TOP | PL_POSITION_LEFT,
                                     PL_POSITION_BOTTOM | PL_POSITION_RIGHT,
                                     PL_POSITION_BOTTOM | PL_POSITION_LEFT};
    double side_w = vx1 - vx0, side_h = vy1 - vy0;
    if (p->equal_axes_with_diagonal) side_w = side_h = fmin(side_w, side_h);
    double fw = fmin(1.0, ls.w_mm / side_w + LEGEND_GAP);
    double fh = fmin(1.0, ls.h_mm / side_h + LEGEND_GAP);
    size_t best = SIZE_MAX;
    for (int c = 0; c < 4; c++) {
      int right = (corners[c] & PL_POSITION_RIGHT) != 0;
      int top = (corners[c] & PL_POSITION_TOP) != 0;
      double x0 = right ? rx.hi - fw * (rx.hi - rx.lo) : rx.lo;
      double x1 = right ? rx.hi : rx.lo + fw * (rx.hi - rx.lo);
      double y0 = top ? ry.hi - fh * (ry.hi - ry.lo) : ry.lo;
      double y1 = top ? ry.hi : ry.lo + fh * (ry.hi - ry.lo);
      size_t cnt = count_in_box(p, bx, by, x0, x1, y0, y1);
      if (cnt < best) {
        best = cnt;
        position = corners[c] | PL_POSITION_INSIDE | PL_POSITION_VIEWPORT;
      }
    }
    /* Outside only if the plot keeps at least 2/3 of its width; else the legend's
     * white box covers the fewest points. */
    if (best > 0 && ls.w_mm + 0.8 * h_mm <= (vx1 - vx0) / 3.0) {
      vx1 -= ls.w_mm + 0.8 * h_mm;
      position = PL_POSITION_OUTSIDE | PL_POSITION_RIGHT | PL_POSITION_VIEWPORT;
    }
  }
  if (p->equal_axes_with_diagonal) {
    double side = fmin(vx1 - vx0, vy1 - vy0);
    double mx = 0.5 * (vx0 + vx1), my = 0.5 * (vy0 + vy1);
    vx0 = mx - 0.5 * side; vx1 = mx + 0.5 * side;
    vy0 = my - 0.5 * side; vy1 = my + 0.5 * side;
    axis_setup(&tp.y, ry.lo, ry.hi, p->log_y, side, h_mm);
  }
  axis_setup(&tp.x, rx.lo, rx.hi, p->log_x, vx1 - vx0, h_mm);

  plsvpa(vx0, vx1, vy0, vy1);
  plwind(rx.lo, rx.hi, ry.lo, ry.hi);

  /* Grid first, then the guide, then data, then the frame on top. */
  plcol0(COL_GRID);
  plwidth(1.0);
  draw_grid(&tp);
  if (p->equal_axes_with_diagonal) {
    plcol0(COL_GUIDE);
    pllsty(2);
    plwidth(1.5);
    pljoin(rx.lo, rx.lo, rx.hi, rx.hi);
    pllsty(1);
    plwidth(1.0);
  }
  for (size_t j = 0; j < p->n_series; j++) {
    transform_series(p, &p->series[j], bx, by);
    draw_series(&p->series[j], bx, by, j, h_mm);
  }
  plcol0(COL_FG);
  plwidth(1.0);
  draw_axes(&tp);
  if (p->xlabel != NULL) plmtex("b", XLABEL_DISP, 0.5, 0.5, p->xlabel);
  if (p->ylabel != NULL) plmtex("l", ydisp, 0.5, 0.5, p->ylabel);
  if (p->title != NULL) draw_title(p->title, cw - 1.0 * h_mm, h_mm);
  if (ls.n > 0) draw_legend(p, position, vx1 - vx0, h_mm);
}

rp_status rp_plot_panels(const char *path, const rp_plot_panel *panels, size_t n_panels,
                         int ncols, int width_px, int height_px, rp_error *err) {
  if (path == NULL) return rp_error_set(err, RP_EINVAL, "picture path is NULL");
  const char *dev = NULL;
  RP_TRY(device_for_path(path, &dev, err));
  if (panels == NULL || n_panels == 0)
    return rp_error_set(err, RP_EINVAL, "picture '%s': no panels to draw (n_panels = %zu)",
                        path, n_panels);
  if (ncols < 1)
    return rp_error_set(err, RP_EINVAL, "picture '%s': ncols = %d is not >= 1", path, ncols);
  if (n_panels > RP_PLOT_MAX_PANELS)
    return rp_error_set(err, RP_EINVAL, "picture '%s': %zu panels, at most %d", path,
                        n_panels, RP_PLOT_MAX_PANELS);
  RP_TRY(check_size(width_px, height_px, err));
  size_t max_n = 0;
  for (size_t k = 0; k < n_panels; k++) RP_TRY(check_panel(&panels[k], k, &max_n, err));

  size_t nc = (size_t)ncols < n_panels ? (size_t)ncols : n_panels;
  size_t nr = (n_panels + nc - 1) / nc;
  /* Pages are 72 units per inch on the cairo devices: 1 px = 25.4/72 mm. */
  double pw = width_px * 25.4 / 72.0, ph = height_px * 25.4 / 72.0;
  double cw = pw / (double)nc, ch = ph / (double)nr;
  double h_mm = text_height_mm(cw, ch, pw, ph);
  if (cw < 16.0 * h_mm || ch < 10.0 * h_mm)
    return rp_error_set(err, RP_EINVAL,
                        "picture '%s': %zu x %zu panels do not fit in %d x %d px", path, nr,
                        nc, width_px, height_px);

  rp_status st = RP_OK;
  double *bx = malloc((max_n > 0 ? max_n : 1) * sizeof *bx);
  double *by = malloc((max_n > 0 ? max_n : 1) * sizeof *by);
  char tmp[PATH_BUF];
  if (bx == NULL || by == NULL) {
    st = rp_error_set(err, RP_ENOMEM, "picture '%s': no memory for %zu points", path, max_n);
    goto done;
  }
  PLINT old_stream;
  st = figure_begin(dev, path, tmp, sizeof tmp, width_px, height_px, &old_stream, err);
  if (st != RP_OK) goto done;
  /* Exact page size in mm as the device sees it. */
  PLFLT px0, px1, py0, py1;
  plgspa(&px0, &px1, &py0, &py1);
  pw = px1 - px0;
  ph = py1 - py0;
  cw = pw / (double)nc;
  ch = ph / (double)nr;
  h_mm = text_height_mm(cw, ch, pw, ph);
  set_text_height(h_mm);
  for (size_t k = 0; k < n_panels; k++) {
    size_t r = k / nc, c = k % nc;
    draw_panel(&panels[k], (double)c * cw, ph - (double)(r + 1) * ch, cw, ch, h_mm, bx, by);
  }
  figure_end(old_stream);
  st = temp_commit(tmp, path, err);

done:
  free(bx);
  free(by);
  return st;
}

/* ---------------------------------------------------------------------- PPI */

/* Clockwise step from azimuth a0 to a1, in [0, 360) degrees. */
static double cw_step_deg(double a0, double a1) {
  double d = fmod(a1 - a0, 360.0);
  return d < 0.0 ? d + 360.0 : d;
}

static rp_status check_ppi(const rp_plot_ppi *q, rp_error *err) {
  if (q->range_km == NULL || q->azimuth_deg == NULL || q->values == NULL)
    return rp_error_set(err, RP_EINVAL, "PPI: range_km, azimuth_deg or values is NULL");
  if (q->n_range < 2 || q->n_azimuth < 2)
    return rp_error_set(err, RP_EINVAL, "PPI: needs >= 2 ranges and >= 2 azimuths (got %zu, %zu)",
                        q->n_range, q->n_azimuth);
  if (q->n_range > 100000 || q->n_azimuth > 100000)
    return rp_error_set(err, RP_EINVAL, "PPI: %zu ranges x %zu azimuths, at most 100000 each",
                        q->n_range, q->n_azimuth);
  for (size_t i = 0; i < q->n_range; i++) {
    double r = q->range_km[i];
    if (!isfinite(r) || r < 0.0)
      return rp_error_set(err, RP_EINVAL, "PPI: range_km[%zu] = %g is not finite and >= 0", i, r);
    if (i > 0 && !(r > q->range_km[i - 1]))
      return rp_error_set(err, RP_EINVAL, "PPI: range_km[%zu] = %g km is not above range_km[%zu] = %g km",
                          i, r, i - 1, q->range_km[i - 1]);
  }
  double span = 0.0;
  for (size_t i = 0; i < q->n_azimuth; i++) {
    double a = q->azimuth_deg[i];
    if (!isfinite(a))
      return rp_error_set(err, RP_EINVAL, "PPI: azimuth_deg[%zu] = %g is not finite", i, a);
    if (i > 0) {
      double d = cw_step_deg(q->azimuth_deg[i - 1], a);
      if (!(d > 0.0))
        return rp_error_set(err, RP_EINVAL, "PPI: azimuth_deg[%zu] = %g° repeats azimuth_deg[%zu]",
                            i, a, i - 1);
      span += d;
    }
  }
  if (span >= 360.0)
    return rp_error_set(err, RP_EINVAL,
                        "PPI: azimuths span %g° clockwise (>= 360°): not in scan order", span);
  if (!isfinite(q->vmin) || !isfinite(q->vmax) || !(q->vmin < q->vmax))
    return rp_error_set(err, RP_EINVAL, "PPI: colour scale [%g, %g] is not finite and increasing",
                        q->vmin, q->vmax);
  if (q->colormap != RP_PLOT_CMAP_SEQUENTIAL && q->colormap != RP_PLOT_CMAP_DIVERGING)
    return rp_error_set(err, RP_EINVAL, "PPI: colour map %d is not 0 (sequential) or 1 (diverging)",
                        q->colormap);
  size_t n = q->n_range * q->n_azimuth;
  for (size_t i = 0; i < n; i++)
    if (isinf(q->values[i]))
      return rp_error_set(err, RP_EINVAL, "PPI: value at azimuth %zu, range %zu is infinite",
                          i / q->n_range, i % q->n_range);
  return RP_OK;
}

/* Cell edges: re (n_range + 1, km) and ae (n_azimuth + 1, unwrapped degrees). */
static void ppi_edges(const rp_plot_ppi *q, double *re, double *ae, int *closed) {
  size_t nr = q->n_range, na = q->n_azimuth;
  for (size_t i = 1; i < nr; i++) re[i] = 0.5 * (q->range_km[i - 1] + q->range_km[i]);
  re[0] = fmax(0.0, q->range_km[0] - 0.5 * (q->range_km[1] - q->range_km[0]));
  re[nr] = q->range_km[nr - 1] + 0.5 * (q->range_km[nr - 1] - q->range_km[nr - 2]);

  /* Unwrapped centres u_i = u_{i-1} + step_i; interior edges at the midpoints. */
  double dmax = 0.0, u = q->azimuth_deg[0];
  for (size_t i = 1; i < na; i++) {
    double d = cw_step_deg(q->azimuth_deg[i - 1], q->azimuth_deg[i]);
    ae[i] = u + 0.5 * d;
    u += d;
    dmax = fmax(dmax, d);
  }
  double first = q->azimuth_deg[0], last = u;
  double gap = 360.0 - (last - first);
  *closed = gap <= 1.5 * dmax;
  if (*closed) {
    ae[0] = first - 0.5 * gap;
    ae[na] = last + 0.5 * gap;
  } else {
    ae[0] = first - 0.5 * cw_step_deg(q->azimuth_deg[0], q->azimuth_deg[1]);
    ae[na] = last + 0.5 * cw_step_deg(q->azimuth_deg[na - 2], q->azimuth_deg[na - 1]);
  }
}

/* A "nice" ring spacing (1, 2, 2.5 or 5 x 10^k km) giving 3 to 6 rings up to rmax. */
static double ring_step(double rmax) {
  double raw = rmax / 4.0;
  double e = pow(10.0, floor(log10(raw)));
  static const double m[] = {1.0, 2.0, 2.5, 5.0, 10.0};
  for (int i = 0; i < 5; i++)
    if (m[i] * e >= raw) return m[i] * e;
  return 10.0 * e;
}

rp_status rp_plot_ppi_write(const char *path, const rp_plot_ppi *ppi, int width_px,
                            int height_px, rp_error *err) {
  if (path == NULL) return rp_error_set(err, RP_EINVAL, "picture path is NULL");
  const char *dev = NULL;
  RP_TRY(device_for_path(path, &dev, err));
  if (ppi == NULL) return rp_error_set(err, RP_EINVAL, "picture '%s': PPI is NULL", path);
  RP_TRY(check_size(width_px, height_px, err));
  rp_status st = check_ppi(ppi, err);
  if (st != RP_OK) {
    rp_error_prefix(err, "picture '%s': ", path);
    return st;
  }

  const size_t nr = ppi->n_range, na = ppi->n_azimuth;
  double *re = malloc((nr + 1) * sizeof *re);
  double *ae = malloc((na + 1) * sizeof *ae);
  double *gx = malloc((nr + 1) * (na + 1) * sizeof *gx);
  double *gy = malloc((nr + 1) * (na + 1) * sizeof *gy);
  double **gxr = malloc((nr + 1) * sizeof *gxr);
  double **gyr = malloc((nr + 1) * sizeof *gyr);
  double *img = malloc(nr * na * sizeof *img);
  double **imgr = malloc(nr * sizeof *imgr);
  char tmp[PATH_BUF];
  if (!re || !ae || !gx || !gy || !gxr || !gyr || !img || !imgr) {
    st = rp_error_set(err, RP_ENOMEM, "picture '%s': no memory for a %zu x %zu PPI", path, na, nr);
    goto done;
  }

  int closed = 0;
  ppi_edges(ppi, re, ae, &closed);
  /* Corners in km: x east, y north; data bounds include the radar at the origin. */
  double bx0 = 0.0, bx1 = 0.0, by0 = 0.0, by1 = 0.0;
  for (size_t i = 0; i <= nr; i++) {
    gxr[i] = gx + i * (na + 1);
    gyr[i] = gy + i * (na + 1);
    for (size_t j = 0; j <= na; j++) {
      double a = ae[j] * M_PI / 180.0;
      gxr[i][j] = re[i] * sin(a);
      gyr[i][j] = re[i] * cos(a);
    }
  }
  /* Bounds: the outer arc sampled finely (an arc can bulge past its corners). */
  for (int k = 0; k <= 720; k++) {
    double a = (ae[0] + (ae[na] - ae[0]) * k / 720.0) * M_PI / 180.0;
    bx0 = fmin(bx0, re[nr] * sin(a)); bx1 = fmax(bx1, re[nr] * sin(a));
    by0 = fmin(by0, re[nr] * cos(a)); by1 = fmax(by1, re[nr] * cos(a));
  }
  {
    double side = fmax(bx1 - bx0, by1 - by0) * 1.04;
    double mx = 0.5 * (bx0 + bx1), my = 0.5 * (by0 + by1);
    bx0 = mx - 0.5 * side; bx1 = mx + 0.5 * side;
    by0 = my - 0.5 * side; by1 = my + 0.5 * side;
  }
  /* Image: idata[ir][ia]; NaN -> below zmin (not drawn); others clamped (saturate). */
  const double below = ppi->vmin - (ppi->vmax - ppi->vmin);
  for (size_t i = 0; i < nr; i++) {
    imgr[i] = img + i * na;
    for (size_t j = 0; j < na; j++) {
      double v = ppi->values[j * nr + i];
      imgr[i][j] = isnan(v) ? below : fmin(fmax(v, ppi->vmin), ppi->vmax);
    }
  }

  /* Layout (mm; 1 px = 1 pt = 25.4/72 mm on the cairo devices). A PPI is one big
   * panel: text a little smaller than a single line plot's. Square map on the left;
   * colour bar, its numbers and its label on the right. Margins in character heights,
   * the left one from the widest y tick label. */
  const double pw = width_px * 25.4 / 72.0, ph = height_px * 25.4 / 72.0;
  const double h_mm = fmax(MIN_TEXT_MM, 0.85 * text_height_mm(pw, ph, pw, ph));
  const double mb = 5.1, mt = ppi->title != NULL ? 2.9 : 1.2, mr = 11.0;
  tick_pair tp;
  axis_setup(&tp.y, by0, by1, 0, ph - (mb + mt) * h_mm, h_mm);
  const double ydisp = ylabel_disp(widest_tick(&tp.y));
  const double ml = ydisp + 0.9;
  const double aw = pw - (ml + mr) * h_mm, ah = ph - (mb + mt) * h_mm;
  const double side = fmin(aw, ah);
  if (side < 12.0 * h_mm) {
    st = rp_error_set(err, RP_EINVAL, "picture '%s': a PPI does not fit in %d x %d px",
                      path, width_px, height_px);
    goto done;
  }
  const double vx0 = ml * h_mm + 0.5 * (aw - side), vy0 = mb * h_mm + 0.5 * (ah - side);
  axis_setup(&tp.x, bx0, bx1, 0, side, h_mm);
  axis_setup(&tp.y, by0, by1, 0, side, h_mm);

  PLINT old_stream;
  st = figure_begin(dev, path, tmp, sizeof tmp, width_px, height_px, &old_stream, err);
  if (st != RP_OK) goto done;
  {
    PLINT ri[CMAP_N], gi[CMAP_N], bi[CMAP_N];
    for (int k = 0; k < CMAP_N; k++) {
      double c[3];
      cmap_entry(ppi->colormap, k, c);
      ri[k] = to_byte(c[0]); gi[k] = to_byte(c[1]); bi[k] = to_byte(c[2]);
    }
    plscmap1n(CMAP_N);
    plscmap1(ri, gi, bi, CMAP_N);

    set_text_height(h_mm);
    plsvpa(vx0, vx0 + side, vy0, vy0 + side);
    plwind(bx0, bx1, by0, by1);

    PLcGrid2 grid = {gxr, gyr, NULL, (PLINT)(nr + 1), (PLINT)(na + 1)};
    plimagefr((PLFLT_MATRIX)imgr, (PLINT)nr, (PLINT)na, 0.0, (double)nr, 0.0, (double)na,
              ppi->vmin, ppi->vmax, ppi->vmin, ppi->vmax, pltr2, &grid);

    /* Range rings and 30° spokes: thin mid grey, visible on both ends of either map. */
    double step = ring_step(re[nr]);
    plcol0(COL_GUIDE);
    plwidth(0.8);
    for (double rr = step; rr <= re[nr] * 1.0001; rr += step) {
      if (closed) {
        plarc(0.0, 0.0, rr, rr, 0.0, 360.0, 0.0, 0);
      } else { /* only over the scanned sector; plarc angles: ccw from east */
        plarc(0.0, 0.0, rr, rr, 90.0 - ae[na], 90.0 - ae[0], 0.0, 0);
      }
    }
    for (int k = 0; k < 12; k++) {
      double a = 30.0 * k;
      double ad = fmod(a - ae[0], 360.0);
      if (ad < 0.0) ad += 360.0;
      if (!closed && ad > ae[na] - ae[0]) continue;
      double ar = a * M_PI / 180.0;
      pljoin(re[0] * sin(ar), re[0] * cos(ar), re[nr] * sin(ar), re[nr] * cos(ar));
    }
    plcol0(COL_FG);
    plwidth(1.0);
    draw_axes(&tp);
    plmtex("b", XLABEL_DISP, 0.5, 0.5, "east of the radar (km)");
    plmtex("l", ydisp, 0.5, 0.5, "north of the radar (km)");
    if (ppi->title != NULL)
      draw_title(ppi->title, side + 2.0 * fmin(vx0, pw - vx0 - side) - h_mm, h_mm);
    /* The ring spacing, in the bottom right corner when there is room beside the
     * centred axis label (about 14 character heights wide). */
    if (side > 34.0 * h_mm) {
      char note[64];
      snprintf(note, sizeof note, "rings every %g km", step);
      set_text_height(0.8 * h_mm);
      plmtex("b", XLABEL_DISP / 0.8, 1.0, 1.0, note);
      set_text_height(h_mm);
    }

    PLFLT cbv[CMAP_N];
    for (int k = 0; k < CMAP_N; k++)
      cbv[k] = ppi->vmin + (ppi->vmax - ppi->vmin) * k / (double)(CMAP_N - 1);
    const PLFLT *cbvals[1] = {cbv};
    PLINT nvals[1] = {CMAP_N};
    PLINT label_opts[1] = {PL_COLORBAR_LABEL_RIGHT};
    const char *labels[1] = {ppi->colorbar_label != NULL ? ppi->colorbar_label : ""};
    const char *axis_opts[1] = {"bcmtv"};
    PLFLT ticks[1] = {0.0};
    PLINT sub_ticks[1] = {0};
    PLFLT cb_w, cb_h;
    plcolorbar(&cb_w, &cb_h, PL_COLORBAR_IMAGE | PL_COLORBAR_ORIENT_TOP,
               PL_POSITION_RIGHT | PL_POSITION_OUTSIDE | PL_POSITION_VIEWPORT, 0.03, 0.0,
               1.2 * h_mm / side, 1.0, COL_BG, COL_FG, 1, 0.0, 0.0, 0, 0.0, 1, label_opts,
               labels, 1, axis_opts, ticks, sub_ticks, nvals, cbvals);
  }
  figure_end(old_stream);
  st = temp_commit(tmp, path, err);

done:
  free(re);
  free(ae);
  free(gx);
  free(gy);
  free(gxr);
  free(gyr);
  free(img);
  free(imgr);
  return st;
}
