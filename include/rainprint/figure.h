/* figure.h — pictures as a small figure API: a figure is a grid of panels, each of one
 * kind (lines, scatter, PPI plan view, RHI range–height cut), written as one PNG, SVG or
 * PDF file by one call. Part of the picture library (rainprint_plot, links PLplot); the
 * core library does not need it.
 *
 * The caller fills plain description structs (rp_figure, rp_figure_panel, ...) that point
 * at its own arrays; the library reads them during the call and keeps nothing. Text may
 * use PLplot escapes: "#u"/"#d" super/subscript ("Z#dDR#u (dB)"), "#g" Greek ("#gr#dhv#u"),
 * and UTF-8 ("°").
 *
 * Missing values are NaN everywhere: a NaN point is not drawn (lines break there), a NaN
 * cell is left blank. Callers pass NaN for floors such as a −99 dB LDR.
 *
 * Files never lie: the picture is drawn to a temporary file in the destination's folder
 * (a name with no '%', so PLplot's file-name expansion never applies; the destination name
 * is used literally), checked after PLplot has closed it (size > 0; PNG ends with its IEND
 * chunk, SVG with </svg>, PDF with %%EOF; every write reached the disk), and only then
 * renamed over the destination. A symlinked destination is written through the link (the
 * link stays, its target gets the content); an existing destination keeps its permission
 * bits; a new one gets the umask permissions. On any failure nothing is left behind.
 *
 * Colours (docs/method.md §11): series in the Okabe–Ito palette with a marker shape each;
 * fields in viridis (sequential) or rainprint's own CIELAB blue–grey–red (diverging).
 *
 * Thread safety: NOT re-entrant. PLplot keeps process-wide state (stream table, abort
 * handler), so the drawing functions must be called from one thread at a time; the caller
 * serialises them. Each figure is a fresh PLplot stream; the caller's current PLplot stream
 * is restored afterwards. The pure functions (colour map, axis range, ticks, file check)
 * are thread-safe. */
#ifndef RAINPRINT_FIGURE_H
#define RAINPRINT_FIGURE_H

#include <stddef.h>

#include "rainprint/status.h"

/* Accepted page sizes, pixels (PNG) or points (SVG, PDF). */
#define RP_FIGURE_MIN_PX 200
#define RP_FIGURE_MAX_PX 10000
#define RP_FIGURE_MAX_PANELS 64
/* Scatter panels: the first series is drawn as a 2-D histogram (density) when it has
 * more finite points than this, unless the panel sets its own threshold. */
#define RP_FIGURE_DENSITY_DEFAULT 2000
/* Most ticks an axis gets and the longest tick label (bytes with the NUL). */
#define RP_FIGURE_MAX_TICKS 16
#define RP_FIGURE_TICK_LABEL_LEN 40
/* Largest grid of a field panel, per dimension. */
#define RP_FIGURE_MAX_CELLS 100000

/* Panel kinds. */
enum {
  RP_FIGURE_LINES = 0,   /* several series, lines and/or markers, legend */
  RP_FIGURE_SCATTER = 1, /* as LINES, and the first series becomes a density when large */
  RP_FIGURE_PPI = 2,     /* plan view of a polar field of one sweep */
  RP_FIGURE_RHI = 3      /* range–height cut, cells given by their corners */
};

/* Series styles. */
enum { RP_FIGURE_STYLE_LINE = 0, RP_FIGURE_STYLE_MARKERS = 1, RP_FIGURE_STYLE_LINE_MARKERS = 2 };

/* Colour maps: viridis (sequential) and rainprint's CIELAB diverging map. */
enum { RP_FIGURE_CMAP_VIRIDIS = 0, RP_FIGURE_CMAP_DIVERGING = 1 };

/* One series: n points (x[i], y[i]); NULL arrays only when n == 0. label NULL = no legend
 * entry. A point with a NaN coordinate is not drawn. */
typedef struct {
  const char *label;
  const double *x, *y;
  size_t n;
  int style; /* RP_FIGURE_STYLE_* */
} rp_figure_series;

/* Lines and scatter panels. */
typedef struct {
  const rp_figure_series *series; /* n_series entries */
  size_t n_series;
  int log_x, log_y;    /* log axes: finite data must be > 0 */
  int one_to_one;      /* dashed y = x, same range on both axes, square plot; needs
                          log_x == log_y */
  size_t density_min_n; /* SCATTER only: 0 = RP_FIGURE_DENSITY_DEFAULT; the first series is
                           drawn as shaded cells of log-scaled counts with a colour bar
                           when it has more finite points than this */
} rp_figure_xy;

/* A polar field of one sweep. Cell centres: range_km (strictly increasing, >= 0) and
 * azimuth_deg (clockwise from north, in scan order, less than a full turn).
 * values[ia * n_range + ir]. ground_range_km: NULL, or n_range ground ranges (strictly
 * increasing, >= 0) at which the gates are drawn instead of range_km (the caller's
 * ground-range projection). */
typedef struct {
  const double *range_km;
  size_t n_range;
  const double *ground_range_km;
  const double *azimuth_deg;
  size_t n_azimuth;
  const double *values;
} rp_figure_ppi;

/* A range–height cut: n_ray rays (elevations) of n_gate gates. Cell (jr, ig) has corners
 * at indices (jr, ig), (jr, ig+1), (jr+1, ig), (jr+1, ig+1) of the corner arrays, which
 * have (n_ray + 1) x (n_gate + 1) entries, corner[jr * (n_gate + 1) + ig]: ground range
 * (km, >= 0) and height (km) from the caller's beam-height model. values[jr * n_gate + ig]. */
typedef struct {
  size_t n_gate, n_ray;
  const double *corner_ground_km, *corner_height_km;
  const double *values;
} rp_figure_rhi;

/* Colour scale of a field panel: values outside [vmin, vmax] take the end colours. */
typedef struct {
  double vmin, vmax;
  int colormap;      /* RP_FIGURE_CMAP_* */
  const char *label; /* colour-bar label with units, e.g. "Z#dH#u (dBZ)"; may be NULL */
} rp_figure_scale;

/* One panel. title/subtitle: e.g. "ZDR against D0" / "C band 5.6 GHz, 10 °C, seeded
 * ensemble": say band, frequency, temperature and data source (may be NULL). xlabel/ylabel
 * with units (NULL: none; PPI and RHI get "east of the radar (km)" / "north of the radar
 * (km)" and "ground range (km)" / "height (km)" when NULL). Only the member of the kind is
 * read (xy, ppi or rhi); scale is read for PPI and RHI. */
typedef struct {
  int kind; /* RP_FIGURE_* */
  const char *title, *subtitle;
  const char *xlabel, *ylabel;
  rp_figure_xy xy;
  rp_figure_ppi ppi;
  rp_figure_rhi rhi;
  rp_figure_scale scale;
} rp_figure_panel;

/* A figure: panels in a grid of ncols columns (row by row from the top left; ncols larger
 * than n_panels is reduced), a page of width_px x height_px (each in
 * [RP_FIGURE_MIN_PX, RP_FIGURE_MAX_PX]), and an optional title and subtitle line at the
 * top of the page. */
typedef struct {
  const char *title, *subtitle;
  const rp_figure_panel *panels;
  size_t n_panels;
  int ncols;
  int width_px, height_px;
} rp_figure;

/* Draw fig and write it to path: format from the extension (any case) ".png", ".svg",
 * ".pdf". '%' and other characters in path are used literally. Whole or not at all (see
 * the top of this file).
 * Statuses:
 *   RP_EINVAL  NULL path/fig, unknown extension, no panels or more than 64, ncols < 1, size
 *              out of range, panels that do not fit the page, unknown kind/style/colour map,
 *              NULL data with n > 0, an infinite value, a non-positive finite value on a
 *              log axis, one_to_one with log_x != log_y, a bad PPI/RHI grid (see the
 *              structs), vmin/vmax not finite or vmin >= vmax, a path too long;
 *   RP_EIO     the destination's folder cannot be written (no temporary file), a write
 *              failed (message has the system's reason, e.g. "No space left on device"),
 *              or the rename failed; nothing is left behind;
 *   RP_ENOMEM  out of memory;
 *   RP_EPLOT   PLplot lacks the cairo device or a free stream, or wrote an incomplete file
 *              without a system error; nothing is left behind.
 * The caller keeps ownership of everything. Not re-entrant. */
rp_status rp_figure_write(const char *path, const rp_figure *fig, rp_error *err);

/* As rp_figure_write but stop before the rename: the checked picture is left in a
 * temporary file in the folder where path (after following symlinks) lives; its name goes
 * to tmp (tmp_len bytes, 4096 is always enough). Finish with rp_figure_commit(tmp, path) or
 * rp_figure_discard(tmp), e.g. after a CSV written beside it is complete too.
 * Statuses as rp_figure_write (RP_EINVAL also when tmp is NULL or too short); on failure
 * no temporary file exists and tmp is "". */
rp_status rp_figure_draw_temp(const char *path, const rp_figure *fig, char *tmp,
                              size_t tmp_len, rp_error *err);

/* Rename the temporary file tmp (from rp_figure_draw_temp) over path, written through a
 * symlinked path, keeping an existing destination's permission bits. On failure tmp is
 * removed. Statuses: RP_OK; RP_EINVAL NULL arguments; RP_EIO rename or chmod failed
 * (system's reason in the message). */
rp_status rp_figure_commit(const char *tmp, const char *path, rp_error *err);

/* Remove a temporary file from rp_figure_draw_temp (NULL or "" is a no-op). */
void rp_figure_discard(const char *tmp);

/* Check that the picture file at path is complete for its format (from the extension of
 * path): size > 0, PNG signature and a final IEND chunk, SVG ending with </svg>, PDF
 * starting with %PDF- and ending with %%EOF (trailing white space allowed).
 * Statuses: RP_OK; RP_EINVAL NULL path or unknown extension; RP_EIO cannot be read;
 * RP_EPLOT incomplete (the message says what is missing). Thread-safe. */
rp_status rp_figure_check_file(const char *path, rp_error *err);

/* Colour of map colormap at t in [0, 1] (0 = vmin) as 8-bit sRGB: the 256-entry table the
 * pictures use (nearest entry). Statuses: RP_EINVAL unknown map, NULL rgb, t not in [0, 1].
 * Thread-safe. */
rp_status rp_figure_colormap_rgb(int colormap, double t, unsigned char rgb[3],
                                 rp_error *err);

/* Axis range for data spanning [data_lo, data_hi] (the finite extremes): the span padded
 * by 4 % on each side (in log10 on a log axis); a zero span is widened (±10 % of the value,
 * ±1 at 0; ±0.1 decade on a log axis); no data (NaN) gives [0, 1] ([1, 10] on a log axis).
 * The range follows the data: no rounding out to decades.
 * Statuses: RP_EINVAL NULL outputs, infinite data, data_lo > data_hi, data <= 0 on a log
 * axis. Thread-safe. */
rp_status rp_figure_axis_range(double data_lo, double data_hi, int is_log, double *lo,
                               double *hi, rp_error *err);

/* Ticks of one axis. value[] in data units (not log10), inside [lo, hi], increasing;
 * label[] PLplot text. One style per axis: plain numbers when every tick can be written
 * with at most 4 decimals and below 10^5, else powers of ten for every tick ("10#u6#d" on
 * decade ticks, "2×10#u6#d" otherwise; a linear axis uses one exponent for all, 0 is "0").
 * powers says which style was chosen. */
typedef struct {
  size_t n;
  double value[RP_FIGURE_MAX_TICKS];
  char label[RP_FIGURE_MAX_TICKS][RP_FIGURE_TICK_LABEL_LEN];
  int powers;
} rp_figure_ticks;

/* Choose ticks for an axis [lo, hi] with at most max_ticks (2..RP_FIGURE_MAX_TICKS)
 * labelled ticks. Linear: a step of 1, 2 or 5 x 10^k, the smallest that gives at most
 * max_ticks. Log: decades (every k-th) when at least 3 fit, else 1-2-5 x 10^k, else every
 * integer mantissa 1..9 x 10^k, else linear steps (so an axis of 0.8–3 mm gets ticks
 * inside 0.8–3, never a 1–10 axis).
 * Statuses: RP_EINVAL NULL out, lo/hi not finite or lo >= hi, lo <= 0 on a log axis,
 * max_ticks out of range. Thread-safe. */
rp_status rp_figure_axis_ticks(double lo, double hi, int is_log, int max_ticks,
                               rp_figure_ticks *out, rp_error *err);

#endif
