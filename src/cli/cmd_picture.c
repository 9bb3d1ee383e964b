/* cmd_picture.c — `rainprint picture`: draw fields of a volume file as a plan view of one
 * sweep (PPI), an overview of every field of a sweep, or a range–height cut through the
 * sweeps (RHI).
 *
 * Colour maps are the project's own perceptually uniform ones (viridis for magnitudes, the
 * CIELAB diverging map for velocities), never the palettes of operational displays. The
 * colour range of each field is a fixed display range chosen for rain (below), so that
 * pictures of different volumes compare; --vmin/--vmax override it. */
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>

#include "cli/cli.h"
#include "rainprint/beam.h"
#include "rainprint/names.h"
#include "rainprint/figure.h"
#include "rainprint/volume_file.h"

#define CMD "picture"

static const rp_opts_spec picture_opts[] = {
    RP_OPTS_STRING_ROW("field", "NAME", "field to draw: DBZ, ZDR, PHIDP, KDP, RHOHV, VEL, WIDTH, "
                       "SNR, LDRH or a truth_* field (default DBZ)"),
    RP_OPTS_LONG_ROW("sweep", "K", "sweep to draw, numbered from 0 as sweep_number in the file",
                     0, 1000, RP_OPTS_RANGED, "0"),
    RP_OPTS_FLAG_ROW("all", "an overview of every observed field of the sweep, with the truth "
                     "of Zh and rain rate beside them"),
    RP_OPTS_DOUBLE_ROW("rhi", "AZIMUTH_DEG", "a range-height cut through every sweep at this "
                       "azimuth instead of a plan view", 0.0, 360.0,
                       RP_OPTS_RANGED | RP_OPTS_HI_OPEN, NULL),
    RP_OPTS_DOUBLE_ROW("range-max", "KM", "draw out to this range (default: every gate)", 0.0,
                       5000.0, RP_OPTS_RANGED | RP_OPTS_LO_OPEN, NULL),
    RP_OPTS_DOUBLE_ROW("vmin", "X", "lower end of the colour scale (default: the field's display "
                       "range; not with --all)", -1e9, 1e9, RP_OPTS_RANGED, NULL),
    RP_OPTS_DOUBLE_ROW("vmax", "X", "upper end of the colour scale", -1e9, 1e9, RP_OPTS_RANGED, NULL),
    RP_OPTS_STRING_ROW("out", "FILE.png", "the picture (.png, .svg or .pdf; required)"),
    RP_OPTS_END};

static const rp_opts_command picture_cmd = {
    .cmd = CMD,
    .usage = "picture FILE.nc --out FILE.png [--field NAME] [--sweep K | --all | --rhi AZIMUTH_DEG]",
    .about = "Draw a field of a volume written by `rainprint scene` (or any CF/Radial file with\n"
             "the same layout): a plan view of one sweep in x-y km (x east, y north) with range\n"
             "rings and a colour bar, every observed field of a sweep at once (--all), or a\n"
             "range-height cut through the sweeps (--rhi). Truth fields (truth_zh_dbz, ...) are\n"
             "drawn like observed ones, so what the rain is can be put beside what the radar\n"
             "shows.",
    .examples = "  rainprint scene examples/valley-squall-line/scene.yaml --out squall.nc\n"
                "  rainprint picture squall.nc --field DBZ --sweep 0 --out dbz.png\n"
                "  rainprint picture squall.nc --all --sweep 0 --out overview.png\n"
                "  rainprint picture squall.nc --field ZDR --rhi 45 --out zdr_rhi.png",
    .tables = {picture_opts},
    .titles = {"Options"},
    .max_positional = 1,
    .positional = "FILE.nc",
};

/* Display range and colour map of the fields a crew looks at. */
typedef struct {
  const char *name, *label;
  double vmin, vmax;
  int cmap;
} display;

static const display DISPLAYS[] = {
    {"DBZ", "Z#dH#u (dBZ)", -10.0, 65.0, RP_FIGURE_CMAP_VIRIDIS},
    {"ZDR", "Z#dDR#u (dB)", -1.0, 5.0, RP_FIGURE_CMAP_VIRIDIS},
    {"PHIDP", "#gF#dDP#u (°)", 0.0, 180.0, RP_FIGURE_CMAP_VIRIDIS},
    {"KDP", "K#dDP#u (° km#u-1#d)", -1.0, 6.0, RP_FIGURE_CMAP_VIRIDIS},
    {"RHOHV", "#gr#dhv#u", 0.8, 1.0, RP_FIGURE_CMAP_VIRIDIS},
    {"VEL", "radial velocity (m s#u-1#d, + away)", NAN, NAN, RP_FIGURE_CMAP_DIVERGING},
    {"WIDTH", "spectrum width (m s#u-1#d)", 0.0, 8.0, RP_FIGURE_CMAP_VIRIDIS},
    {"SNR", "SNR (dB)", -10.0, 60.0, RP_FIGURE_CMAP_VIRIDIS},
    {"LDRH", "LDR (dB)", -45.0, -10.0, RP_FIGURE_CMAP_VIRIDIS},
    {"truth_zh_dbz", "true Z#dH#u (dBZ)", -10.0, 65.0, RP_FIGURE_CMAP_VIRIDIS},
    {"truth_zdr_db", "true Z#dDR#u (dB)", -1.0, 5.0, RP_FIGURE_CMAP_VIRIDIS},
    {"truth_kdp_deg_km", "true K#dDP#u (° km#u-1#d)", -1.0, 6.0, RP_FIGURE_CMAP_VIRIDIS},
    {"truth_velocity_ms", "true radial velocity (m s#u-1#d)", NAN, NAN, RP_FIGURE_CMAP_DIVERGING},
    {"truth_rain_rate_mm_h", "true rain rate (mm h#u-1#d)", 0.0, 100.0, RP_FIGURE_CMAP_VIRIDIS},
    {"truth_temperature_c", "temperature (°C)", -10.0, 30.0, RP_FIGURE_CMAP_VIRIDIS},
};

static const char *const OVERVIEW[] = {"DBZ", "ZDR", "KDP", "PHIDP", "RHOHV", "VEL",
                                       "WIDTH", "SNR", "LDRH", "truth_zh_dbz",
                                       "truth_rain_rate_mm_h"};

static const display *find_display(const char *name) {
  for (size_t i = 0; i < sizeof DISPLAYS / sizeof DISPLAYS[0]; i++)
    if (strcmp(DISPLAYS[i].name, name) == 0) return &DISPLAYS[i];
  return NULL;
}

static int has_field(const rp_volume_reader *r, const char *name) {
  for (size_t i = 0; i < rp_volume_file_n_fields(r); i++)
    if (strcmp(rp_volume_file_field_name(r, i), name) == 0) return 1;
  return 0;
}

/* A field the file lacks: the message lists what it has, with a suggestion. */
static int no_such_field(const rp_volume_reader *r, const char *path, const char *name) {
  const size_t n = rp_volume_file_n_fields(r);
  const char **names = calloc(n ? n : 1, sizeof *names);
  if (names == NULL) return rp_cli_fail(CMD, RP_ENOMEM, "out of memory");
  for (size_t i = 0; i < n; i++) names[i] = rp_volume_file_field_name(r, i);
  char list[2048];
  rp_names_list(names, n, list, sizeof list);
  const char *hint = rp_names_suggest(names, n, name);
  int rc;
  if (hint)
    rc = rp_cli_fail(CMD, RP_EINVAL, "--field: %s has no field '%s' (did you mean '%s'?; it has "
                     "%s)", path, name, hint, list);
  else
    rc = rp_cli_fail(CMD, RP_EINVAL, "--field: %s has no field '%s' (it has %s)", path, name, list);
  free(names);
  return rc;
}

/* Colour scale: the display range, the field's own when unknown (finite min..max), the
 * velocity map symmetric about 0, options on top. */
static int scale_for(const char *name, const double *values, size_t n, const rp_opts *o,
                     double nyquist_ms, rp_figure_scale *s, char *label, size_t label_len,
                     const char *units) {
  const display *d = find_display(name);
  double lo = d ? d->vmin : (double)NAN, hi = d ? d->vmax : (double)NAN;
  s->colormap = d ? d->cmap : RP_FIGURE_CMAP_VIRIDIS;
  if (d && s->colormap == RP_FIGURE_CMAP_DIVERGING) {
    double m = (isfinite(nyquist_ms) && nyquist_ms > 0.0) ? nyquist_ms : 0.0;
    if (m == 0.0)
      for (size_t i = 0; i < n; i++)
        if (isfinite(values[i]) && fabs(values[i]) > m) m = fabs(values[i]);
    lo = -(m > 0.0 ? m : 1.0);
    hi = -lo;
  }
  if (!(lo < hi)) {
    lo = INFINITY;
    hi = -INFINITY;
    for (size_t i = 0; i < n; i++)
      if (isfinite(values[i])) {
        lo = fmin(lo, values[i]);
        hi = fmax(hi, values[i]);
      }
    if (!(lo < hi)) { /* empty or constant */
      const double c = isfinite(lo) ? lo : 0.0;
      lo = c - 1.0;
      hi = c + 1.0;
    }
  }
  const int given_lo = rp_opts_given(o, "vmin"), given_hi = rp_opts_given(o, "vmax");
  if (given_lo) lo = rp_opts_double(o, "vmin", lo);
  if (given_hi) hi = rp_opts_double(o, "vmax", hi);
  /* one end given and past the other end of the field's own scale: say which option */
  if (given_lo && !given_hi && !(lo < hi))
    return rp_cli_fail(CMD, RP_EINVAL, "--vmin %g is not below the upper end %g of the colour "
                       "scale of %s: give --vmax too", lo, hi, name);
  if (given_hi && !given_lo && !(lo < hi))
    return rp_cli_fail(CMD, RP_EINVAL, "--vmax %g is not above the lower end %g of the colour "
                       "scale of %s: give --vmin too", hi, lo, name);
  s->vmin = lo;
  s->vmax = hi;
  if (d)
    snprintf(label, label_len, "%s", d->label);
  else
    snprintf(label, label_len, "%s (%s)", name, units[0] ? units : "1");
  s->label = label;
  return 0;
}

/* Gates within --range-max. */
static size_t gates_shown(const rp_volume_cut *c, const rp_opts *o) {
  if (!rp_opts_given(o, "range-max")) return c->n_gates;
  const double rmax_m = 1e3 * rp_opts_double(o, "range-max", 0.0);
  size_t n = 0;
  while (n < c->n_gates && c->range_m[n] <= rmax_m) n++;
  return n;
}

typedef struct {
  rp_volume_cut cut;
  double *range_km, *ground_km, *values;
  char label[128], title[160];
} ppi_panel;

static void ppi_free(ppi_panel *p) {
  rp_volume_cut_free(&p->cut);
  free(p->range_km);
  free(p->ground_km);
  free(p->values);
}

/* Read field name of sweep k into panel *fp (ground-range projection of the sweep's
 * first ray: the same elevation on every ray of a PPI). */
static int load_ppi(const rp_volume_reader *r, const char *name, size_t k, const rp_opts *o,
                    double nyquist_ms, ppi_panel *p, rp_figure_panel *fp) {
  rp_error err = {0};
  if (rp_volume_file_read_sweep(r, name, k, &p->cut, &err) != RP_OK) return rp_cli_fail_err(CMD, &err);
  const size_t ng = gates_shown(&p->cut, o), na = p->cut.n_rays;
  if (ng < 2 || na < 2)
    return rp_cli_fail(CMD, RP_EINVAL, "--range-max: fewer than 2 gates or rays to draw");
  p->range_km = malloc(ng * sizeof *p->range_km);
  p->ground_km = malloc(ng * sizeof *p->ground_km);
  p->values = malloc(na * ng * sizeof *p->values);
  if (!p->range_km || !p->ground_km || !p->values) return rp_cli_fail(CMD, RP_ENOMEM, "out of memory");
  for (size_t g = 0; g < ng; g++) {
    p->range_km[g] = 1e-3 * p->cut.range_m[g];
    p->ground_km[g] = 1e-3 * p->cut.ground_m[g];
  }
  for (size_t a = 0; a < na; a++)
    memcpy(p->values + a * ng, p->cut.values + a * p->cut.n_gates, ng * sizeof *p->values);
  memset(fp, 0, sizeof *fp);
  fp->kind = RP_FIGURE_PPI;
  fp->ppi.range_km = p->range_km;
  fp->ppi.ground_range_km = p->ground_km;
  fp->ppi.n_range = ng;
  fp->ppi.azimuth_deg = p->cut.azimuth_deg;
  fp->ppi.n_azimuth = na;
  fp->ppi.values = p->values;
  fp->xlabel = "x (km east)";
  fp->ylabel = "y (km north)";
  int rc = scale_for(name, p->values, na * ng, o, nyquist_ms, &fp->scale, p->label,
                     sizeof p->label, p->cut.units);
  if (rc) return rc;
  snprintf(p->title, sizeof p->title, "%s", name);
  fp->title = p->title;
  return 0;
}

/* Cell corners of an RHI: range edges halfway between gates, elevation edges halfway
 * between sweeps (the outer ones half a step beyond), on the 4/3-earth model (beam.h). */
static int rhi_corners(const rp_volume_cut *c, size_t ng, double *cg, double *ch) {
  const size_t nr = c->n_rays;
  for (size_t j = 0; j <= nr; j++) {
    double el;
    if (nr == 1)
      el = c->elevation_deg[0] + (j == 0 ? -0.5 : 0.5);
    else if (j == 0)
      el = c->elevation_deg[0] - 0.5 * (c->elevation_deg[1] - c->elevation_deg[0]);
    else if (j == nr)
      el = c->elevation_deg[nr - 1] + 0.5 * (c->elevation_deg[nr - 1] - c->elevation_deg[nr - 2]);
    else
      el = 0.5 * (c->elevation_deg[j - 1] + c->elevation_deg[j]);
    el = fmax(el, 0.0);
    for (size_t g = 0; g <= ng; g++) {
      const double dr = ng > 1 ? c->range_m[1] - c->range_m[0] : c->range_m[0];
      const double r = g < ng ? c->range_m[g] - 0.5 * dr : c->range_m[ng - 1] + 0.5 * dr;
      double h, s;
      rp_beam_geometry(fmax(r, 0.0), el, &h, &s);
      cg[j * (ng + 1) + g] = 1e-3 * s;
      ch[j * (ng + 1) + g] = 1e-3 * h;
    }
  }
  return 0;
}

static int draw(const char *out, const rp_figure *fig) {
  rp_error err = {0};
  if (rp_figure_write(out, fig, &err) != RP_OK) return rp_cli_fail(CMD, err.status, "--out: %s", err.msg);
  return 0;
}

int rp_cmd_picture(int argc, char **argv) {
  rp_opts o;
  int rc = rp_opts_parse(&picture_cmd, argc, argv, &o);
  if (rc != RP_OPTS_GO_ON) return rc;
  if (o.n_pos != 1) return rp_cli_fail(CMD, RP_EINVAL, "give one volume FILE.nc (see --help)");
  if ((rc = rp_opts_required(&o, "out"))) return rc;
  if ((rc = rp_opts_exclusive(&o, "all", "rhi", (const char *)NULL))) return rc;
  if ((rc = rp_opts_exclusive(&o, "all", "field", (const char *)NULL))) return rc;
  if ((rc = rp_opts_exclusive(&o, "rhi", "sweep", (const char *)NULL))) return rc;
  /* one colour scale cannot serve fields of different units (dBZ, dB, m/s, ...) */
  if ((rc = rp_opts_exclusive(&o, "all", "vmin", (const char *)NULL)) ||
      (rc = rp_opts_exclusive(&o, "all", "vmax", (const char *)NULL)))
    return rc;
  const char *path = o.pos[0], *out = rp_opts_string(&o, "out", NULL);
  if ((rc = rp_cli_check_output(CMD, "out", out))) return rc;
  const size_t n = strlen(out);
  if (!(n > 4 && (strcasecmp(out + n - 4, ".png") == 0 || strcasecmp(out + n - 4, ".svg") == 0 ||
                  strcasecmp(out + n - 4, ".pdf") == 0)))
    return rp_cli_fail(CMD, RP_EINVAL, "--out '%s': the name must end in .png, .svg or .pdf", out);
  if (rp_opts_given(&o, "vmin") && rp_opts_given(&o, "vmax") &&
      !(rp_opts_double(&o, "vmin", 0) < rp_opts_double(&o, "vmax", 0)))
    return rp_cli_fail(CMD, RP_EINVAL, "--vmin must be less than --vmax");
  const char *field = rp_opts_string(&o, "field", "DBZ");
  const size_t sweep = (size_t)rp_opts_long(&o, "sweep", 0);

  rp_error err = {0};
  rp_volume_reader *r = NULL;
  if (rp_volume_file_open(path, &r, &err) != RP_OK) return rp_cli_fail_err(CMD, &err);
  if (sweep >= rp_volume_file_sweeps(r)) {
    rc = rp_cli_fail(CMD, RP_EINVAL, "--sweep %zu: %s has sweeps 0 to %zu", sweep, path,
                     rp_volume_file_sweeps(r) - 1);
    rp_volume_file_close(r);
    return rc;
  }
  double first_el = 0.0;
  size_t a0, a1;
  if (rp_volume_file_sweep_rays(r, sweep, &a0, &a1, &first_el, &err) != RP_OK) {
    rp_volume_file_close(r);
    return rp_cli_fail_err(CMD, &err);
  }
  rp_volume_file_meta meta;
  rp_volume_file_get_meta(r, &meta);
  const double nyquist = meta.nyquist_ms; /* NaN: the velocity range from the data */
  char title[256], subtitle[256], freq[48] = "";
  if (meta.band[0])
    snprintf(freq, sizeof freq, ", %s band (%.4g GHz)", meta.band, meta.frequency_ghz);
  else if (isfinite(meta.frequency_ghz))
    snprintf(freq, sizeof freq, ", %.4g GHz", meta.frequency_ghz);
  snprintf(title, sizeof title, "%s%s%s%s", meta.instrument_name[0] ? meta.instrument_name : "volume",
           freq, meta.time_coverage_start[0] ? ", " : "", meta.time_coverage_start);
  const char *src = strrchr(path, '/') ? strrchr(path, '/') + 1 : path;

  if (rp_opts_given(&o, "rhi")) {
    const double az = rp_opts_double(&o, "rhi", 0.0);
    if (!has_field(r, field)) {
      rc = no_such_field(r, path, field);
      rp_volume_file_close(r);
      return rc;
    }
    rp_volume_cut c;
    memset(&c, 0, sizeof c);
    if (rp_volume_file_read_rhi(r, field, az, &c, &err) != RP_OK) {
      rp_volume_file_close(r);
      return rp_cli_fail_err(CMD, &err);
    }
    const size_t ng = gates_shown(&c, &o), nr = c.n_rays;
    double *cg = malloc((nr + 1) * (ng + 1) * sizeof *cg);
    double *ch = malloc((nr + 1) * (ng + 1) * sizeof *ch);
    double *vals = malloc(nr * ng * sizeof *vals);
    if (!cg || !ch || !vals || ng < 1) {
      rc = rp_cli_fail(CMD, ng < 1 ? RP_EINVAL : RP_ENOMEM, ng < 1 ? "--range-max: no gate to draw"
                                                                     : "out of memory");
    } else {
      rhi_corners(&c, ng, cg, ch);
      for (size_t j = 0; j < nr; j++) memcpy(vals + j * ng, c.values + j * c.n_gates, ng * sizeof *vals);
      char label[128], ptitle[160];
      rp_figure_panel p;
      memset(&p, 0, sizeof p);
      p.kind = RP_FIGURE_RHI;
      p.rhi.n_gate = ng;
      p.rhi.n_ray = nr;
      p.rhi.corner_ground_km = cg;
      p.rhi.corner_height_km = ch;
      p.rhi.values = vals;
      p.xlabel = "ground range (km)";
      p.ylabel = "height above the radar (km)";
      rc = scale_for(field, vals, nr * ng, &o, nyquist, &p.scale, label, sizeof label, c.units);
      snprintf(ptitle, sizeof ptitle, "%s, range-height cut at azimuth %.1f°", field, az);
      p.title = ptitle;
      snprintf(subtitle, sizeof subtitle, "%zu sweeps, 4/3-earth beam heights; %s", nr, src);
      rp_figure fig = {title, subtitle, &p, 1, 1, 1100, 620};
      if (rc == 0) rc = draw(out, &fig);
    }
    free(cg);
    free(ch);
    free(vals);
    rp_volume_cut_free(&c);
    rp_volume_file_close(r);
    return rc;
  }

  /* plan views */
  const char *names[sizeof OVERVIEW / sizeof OVERVIEW[0]];
  size_t np = 0;
  if (rp_opts_given(&o, "all")) {
    for (size_t i = 0; i < sizeof OVERVIEW / sizeof OVERVIEW[0]; i++)
      if (has_field(r, OVERVIEW[i])) names[np++] = OVERVIEW[i];
  } else {
    if (!has_field(r, field)) {
      rc = no_such_field(r, path, field);
      rp_volume_file_close(r);
      return rc;
    }
    names[np++] = field;
  }
  ppi_panel *pp = calloc(np, sizeof *pp);
  rp_figure_panel *panels = calloc(np, sizeof *panels);
  if (pp == NULL || panels == NULL) rc = rp_cli_fail(CMD, RP_ENOMEM, "out of memory");
  for (size_t i = 0; i < np && rc == 0; i++)
    rc = load_ppi(r, names[i], sweep, &o, nyquist, &pp[i], &panels[i]);
  if (rc == 0) {
    snprintf(subtitle, sizeof subtitle, "sweep %zu, elevation %.2f°; %s", sweep, first_el, src);
    const int ncols = np == 1 ? 1 : (np <= 4 ? 2 : (np <= 9 ? 3 : 4));
    const int nrows = (int)((np + (size_t)ncols - 1) / (size_t)ncols);
    rp_figure fig = {title, subtitle, panels, np, ncols, np == 1 ? 900 : 460 * ncols,
                     np == 1 ? 820 : 420 * nrows + 80};
    rc = draw(out, &fig);
  }
  for (size_t i = 0; pp != NULL && i < np; i++) ppi_free(&pp[i]);
  free(pp);
  free(panels);
  rp_volume_file_close(r);
  return rc;
}
