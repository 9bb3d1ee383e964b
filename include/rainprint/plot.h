/* plot.h — pictures, first API: multi-panel line/scatter figures and polar (PPI) fields,
 * written as PNG, SVG or PDF through PLplot's cairo drivers. Kept for the tool's commands;
 * both functions are drawn through the figure API (figure.h), which new code should use
 * (it adds scatter density, RHI, subtitles, draw-then-commit).
 *
 * Colours are rainprint's own choice (docs/method.md §11):
 *   - series: the Okabe–Ito colour-blind-safe palette (Okabe & Ito 2008), each series
 *     also gets its own marker shape so that colour is never the only cue;
 *   - sequential fields: viridis (van der Walt & Smith 2015), perceptually uniform,
 *     lightness increasing monotonically;
 *   - diverging fields: a blue–grey–red map interpolated linearly in CIELAB (CIE 15),
 *     so equal steps in value are equal colour differences (CIE76 ΔE) on each arm.
 *
 * Output files are written whole or not at all, as in figure.h: drawn to a temporary
 * file in the destination's folder, checked complete after PLplot closed it (a failed
 * write, e.g. a full disk, is RP_EIO with the system's reason), then renamed; '%' in a
 * name is literal, a symlink is written through, an existing file keeps its mode. Axis
 * ranges follow the data (log axes are not rounded out to decades) and legends go in
 * the emptiest inside corner or below the panel.
 *
 * Text (titles, axis labels, legend labels) may use PLplot's escapes: "#u"/"#d" for
 * super/subscript ("Z#dDR#u (dB)", "km#u-1#d"), "#g" for Greek ("#gr#dhv#u"), and UTF-8
 * ("°", "ρ").
 *
 * Thread safety: NOT re-entrant. PLplot keeps process-wide state (its stream table and
 * its abort handler), so the functions of this module must be called from one thread
 * at a time; the caller serialises them. Each figure is a fresh PLplot stream of its
 * own (plmkstrm ... plend1), so the caller's current PLplot stream, if any, is
 * restored afterwards. PLplot may still write a line to stderr on its own for
 * conditions it treats as fatal; inputs are validated first so that this does not
 * happen for anything this module accepts. */
#ifndef RAINPRINT_PLOT_H
#define RAINPRINT_PLOT_H

#include <stddef.h>

#include "rainprint/status.h"

/* Accepted figure sizes, pixels (PNG) or points (SVG, PDF). */
#define RP_PLOT_MIN_PX 200
#define RP_PLOT_MAX_PX 10000
/* Most panels in one figure. */
#define RP_PLOT_MAX_PANELS 64

/* Series drawing styles. */
enum { RP_PLOT_LINE = 0, RP_PLOT_MARKERS = 1, RP_PLOT_LINE_MARKERS = 2 };

/* Field colour maps. */
enum { RP_PLOT_CMAP_SEQUENTIAL = 0, RP_PLOT_CMAP_DIVERGING = 1 };

/* One data series of a panel. x and y have n values (NULL allowed only when n == 0).
 * A point with a NaN coordinate is skipped: lines are broken there (a gap). A series
 * with no finite point appears in the legend only. label may be NULL (no legend entry);
 * escapes allowed. style: RP_PLOT_LINE, RP_PLOT_MARKERS or RP_PLOT_LINE_MARKERS. */
typedef struct {
  const char *label;
  const double *x, *y;
  size_t n;
  int style; /* 0 line, 1 markers, 2 line+markers */
} rp_plot_series;

/* One panel: axes, labels and its series. The axis ranges are chosen from the finite
 * data with a small margin. */
typedef struct {
  const char *title;            /* may be NULL */
  const char *xlabel, *ylabel;  /* with units, PLplot escapes allowed, e.g. "K#dDP#u (° km#u-1#d)"; may be NULL */
  const rp_plot_series *series; /* n_series entries (NULL allowed only when n_series == 0) */
  size_t n_series;
  int log_x, log_y;             /* log axes (the finite data must be > 0) */
  int equal_axes_with_diagonal; /* 1:1 panel: same range on both axes, square, dashed y = x;
                                   needs log_x == log_y */
} rp_plot_panel;

/* Draw n_panels panels in a grid of ncols columns (row by row, top left first) and write
 * the figure to path. The format follows the extension (case-insensitive): ".png"
 * (pngcairo), ".svg" (svgcairo) or ".pdf" (pdfcairo). width_px x height_px is the page
 * size in pixels (PNG) or points (SVG, PDF), each in [RP_PLOT_MIN_PX, RP_PLOT_MAX_PX].
 * Written whole or not at all (temporary file in the same folder, then rename).
 * Panels get at least 16 x 10 character heights (text is at least 11 px high); ncols
 * larger than n_panels is reduced to n_panels.
 * Statuses:
 *   RP_EINVAL  NULL path/panels, n_panels == 0 or > 64, ncols < 1, size out of range,
 *              panels that do not fit the page, unknown extension, NULL data with
 *              n > 0, a bad style, an infinite coordinate, a non-positive finite value
 *              on a log axis, log_x != log_y on a 1:1 panel;
 *   RP_EIO     the temporary file cannot be created (e.g. the folder does not exist),
 *              a write failed (system's reason in the message) or the rename failed;
 *              nothing is left behind;
 *   RP_ENOMEM  out of memory;
 *   RP_EPLOT   PLplot lacks the cairo device, has no free stream, or wrote an
 *              incomplete file; nothing is left behind.
 * The caller keeps ownership of everything passed in. Not re-entrant (see above). */
rp_status rp_plot_panels(const char *path, const rp_plot_panel *panels, size_t n_panels,
                         int ncols, int width_px, int height_px, rp_error *err);

/* A polar field on a range x azimuth grid of cells, drawn in x–y km (x east, y north)
 * with range rings, a colour bar with its label and the chosen colour map. */
typedef struct {
  const char *title, *colorbar_label;          /* may be NULL; escapes allowed */
  const double *range_km; size_t n_range;      /* cell centres, strictly increasing, >= 0 */
  const double *azimuth_deg; size_t n_azimuth; /* cell centres, clockwise from north,
                                                  in scan order (each step clockwise,
                                                  less than 360° in total) */
  const double *values;                        /* n_azimuth * n_range, row-major by
                                                  azimuth: values[ia * n_range + ir] */
  double vmin, vmax;                           /* colour scale; values outside saturate */
  int colormap;                                /* 0 sequential (e.g. reflectivity),
                                                  1 diverging (e.g. ZDR, velocity) */
} rp_plot_ppi;

/* Draw ppi and write it to path (format from the extension, as rp_plot_panels).
 * Cell edges are the midpoints between centres; the outer edges are half a spacing
 * beyond the outer centres (the first range edge is not below 0). When the gap between
 * the last and the first azimuth (through north) is at most 1.5 times the largest step
 * between neighbours, the rays are taken to close the circle. NaN cells are left blank
 * (background); values outside [vmin, vmax] take the end colours.
 * Statuses:
 *   RP_EINVAL  NULL pointers, n_range or n_azimuth < 2, a non-finite, negative or
 *              non-increasing range, a non-finite azimuth or a step that is not
 *              clockwise in (0, 360) degrees or azimuths spanning 360° or more,
 *              an infinite value, vmin/vmax not finite or vmin >= vmax, unknown
 *              colour map, size out of range, unknown extension;
 *   RP_EIO, RP_ENOMEM, RP_EPLOT as rp_plot_panels.
 * The caller keeps ownership of everything passed in. Not re-entrant (see above). */
rp_status rp_plot_ppi_write(const char *path, const rp_plot_ppi *ppi, int width_px,
                            int height_px, rp_error *err);

/* Colour of colour map `colormap` (RP_PLOT_CMAP_*) at position t in [0, 1] (0 = vmin),
 * as 8-bit sRGB in rgb[0..2]: the same table the field pictures use (256 entries,
 * nearest entry). For tests and for legends drawn by other programs.
 * Statuses: RP_EINVAL for an unknown colour map, NULL rgb or t not in [0, 1]. */
rp_status rp_plot_colormap_rgb(int colormap, double t, unsigned char rgb[3],
                               rp_error *err);

#endif
