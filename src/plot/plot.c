/* plot.c — the first picture API (plot.h), kept for the tool's commands: each call is
 * translated into a figure (figure.h) and drawn by rp_figure_write, so both APIs share one
 * layout, one set of colour maps and the same file checks.
 *
 * Method: an rp_plot_panel becomes a RP_FIGURE_LINES panel (never a density: the old API
 * always drew markers), its 1:1 flag the panel's one_to_one; an rp_plot_ppi becomes a
 * one-panel figure with a PPI panel. Invariants: no state; never prints. */
#include "rainprint/plot.h"

#include <stdlib.h>

#include "rainprint/figure.h"

rp_status rp_plot_panels(const char *path, const rp_plot_panel *panels, size_t n_panels,
                         int ncols, int width_px, int height_px, rp_error *err) {
  if (path == NULL) return rp_error_set(err, RP_EINVAL, "picture path is NULL");
  if (n_panels > RP_PLOT_MAX_PANELS)
    return rp_error_set(err, RP_EINVAL, "picture '%s': %zu panels, at most %d", path, n_panels,
                        RP_PLOT_MAX_PANELS);
  if (panels == NULL || n_panels == 0) {
    rp_figure fig = {NULL, NULL, NULL, n_panels, ncols, width_px, height_px};
    return rp_figure_write(path, &fig, err); /* the figure API words the error */
  }
  size_t n_series = 0;
  for (size_t k = 0; k < n_panels; k++) n_series += panels[k].n_series;
  rp_figure_panel *fp = calloc(n_panels, sizeof *fp);
  rp_figure_series *fs = calloc(n_series > 0 ? n_series : 1, sizeof *fs);
  rp_status st;
  if (fp == NULL || fs == NULL) {
    st = rp_error_set(err, RP_ENOMEM, "picture '%s': no memory for %zu panels", path, n_panels);
    goto done;
  }
  size_t js = 0;
  for (size_t k = 0; k < n_panels; k++) {
    const rp_plot_panel *p = &panels[k];
    rp_figure_panel *q = &fp[k];
    q->kind = RP_FIGURE_LINES;
    q->title = p->title;
    q->xlabel = p->xlabel;
    q->ylabel = p->ylabel;
    q->xy.log_x = p->log_x;
    q->xy.log_y = p->log_y;
    q->xy.one_to_one = p->equal_axes_with_diagonal;
    q->xy.n_series = p->n_series;
    q->xy.series = p->series != NULL ? fs + js : NULL;
    for (size_t j = 0; p->series != NULL && j < p->n_series; j++, js++)
      fs[js] = (rp_figure_series){p->series[j].label, p->series[j].x, p->series[j].y,
                                  p->series[j].n, p->series[j].style};
  }
  rp_figure fig = {NULL, NULL, fp, n_panels, ncols, width_px, height_px};
  st = rp_figure_write(path, &fig, err);
done:
  free(fp);
  free(fs);
  return st;
}

rp_status rp_plot_ppi_write(const char *path, const rp_plot_ppi *ppi, int width_px,
                            int height_px, rp_error *err) {
  if (path == NULL) return rp_error_set(err, RP_EINVAL, "picture path is NULL");
  if (ppi == NULL) return rp_error_set(err, RP_EINVAL, "picture '%s': PPI is NULL", path);
  rp_figure_panel p = {0};
  p.kind = RP_FIGURE_PPI;
  p.title = ppi->title;
  p.ppi = (rp_figure_ppi){ppi->range_km, ppi->n_range, NULL, ppi->azimuth_deg, ppi->n_azimuth,
                          ppi->values};
  p.scale = (rp_figure_scale){ppi->vmin, ppi->vmax, ppi->colormap, ppi->colorbar_label};
  rp_figure fig = {NULL, NULL, &p, 1, 1, width_px, height_px};
  return rp_figure_write(path, &fig, err);
}

rp_status rp_plot_colormap_rgb(int colormap, double t, unsigned char rgb[3],
                               rp_error *err) {
  return rp_figure_colormap_rgb(colormap, t, rgb, err);
}
