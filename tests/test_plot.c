/* test_plot.c — the first picture API (plot.h, now drawn through figure.h): files are
 * written whole, in the asked format and size, or not at all; bad input is refused with
 * the right status; the colour maps keep the properties the docs claim for them. The
 * figure API itself is tested in test_figure.c.
 *
 * Each test works in its own fresh folder under the build directory (RP_BINARY_DIR,
 * else /tmp), and checks at the end that nothing but the expected files is left there
 * (no temporary files). */
#include "rp_test.h"
#include "rp_test_plplot.h"

#include <dirent.h>
#include <plplot.h>
#include <string.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

#include "rainprint/plot.h"

/* ------------------------------------------------------------------ fixture */

typedef struct {
  char dir[1024];
} fixture;

static int setup(void **state) {
  fixture *f = calloc(1, sizeof *f);
  if (f == NULL) return -1;
  const char *base = getenv("RP_BINARY_DIR");
  snprintf(f->dir, sizeof f->dir, "%s/test_plot_XXXXXX", base != NULL ? base : "/tmp");
  if (mkdtemp(f->dir) == NULL) {
    free(f);
    return -1;
  }
  *state = f;
  return 0;
}

static int teardown(void **state) {
  fixture *f = *state;
  DIR *d = opendir(f->dir);
  if (d != NULL) {
    struct dirent *e;
    while ((e = readdir(d)) != NULL) {
      if (strcmp(e->d_name, ".") == 0 || strcmp(e->d_name, "..") == 0) continue;
      char p[2048];
      snprintf(p, sizeof p, "%s/%s", f->dir, e->d_name);
      unlink(p);
    }
    closedir(d);
  }
  rmdir(f->dir);
  free(f);
  return 0;
}

static const char *in_dir(const fixture *f, const char *name, char *buf, size_t n) {
  snprintf(buf, n, "%s/%s", f->dir, name);
  return buf;
}



static uint32_t be32(const unsigned char *p) {
  return ((uint32_t)p[0] << 24) | ((uint32_t)p[1] << 16) | ((uint32_t)p[2] << 8) | p[3];
}

/* Check a PNG: the 8-byte signature, then the IHDR chunk first with the size
 * (PNG specification, ISO/IEC 15948:2004, §5.2 signature and §11.2.2 IHDR; section
 * numbers from memory). */
static void assert_png_of_size(const char *path, uint32_t w, uint32_t h) {
  size_t n = 0;
  unsigned char *b = rp_test_slurp(path, &n);
  assert_non_null(b);
  assert_true(n > 33);
  static const unsigned char sig[8] = {0x89, 'P', 'N', 'G', '\r', '\n', 0x1A, '\n'};
  assert_memory_equal(b, sig, 8);
  assert_int_equal(be32(b + 8), 13); /* IHDR data length */
  assert_memory_equal(b + 12, "IHDR", 4);
  assert_int_equal(be32(b + 16), w);
  assert_int_equal(be32(b + 20), h);
  free(b);
}

/* --------------------------------------------------------------- test data */

#define NPT 40
typedef struct {
  double x[NPT], y1[NPT], y2[NPT], y3[NPT];
  rp_plot_series s[3];
  rp_plot_panel p[2];
} figure_data;

/* Two panels, three series; the second series has NaN gaps, one at an end. */
static void make_figure(figure_data *fd) {
  for (int i = 0; i < NPT; i++) {
    fd->x[i] = 0.5 + 0.1 * i;
    fd->y1[i] = 0.3 * fd->x[i] * fd->x[i];
    fd->y2[i] = (i % 7 == 3 || i == 0) ? (double)NAN : 0.2 + 0.5 * fd->x[i];
    fd->y3[i] = 2.0 / fd->x[i];
  }
  fd->s[0] = (rp_plot_series){"S band", fd->x, fd->y1, NPT, RP_PLOT_LINE};
  fd->s[1] = (rp_plot_series){"C band", fd->x, fd->y2, NPT, RP_PLOT_LINE_MARKERS};
  fd->s[2] = (rp_plot_series){"X band", fd->x, fd->y3, NPT, RP_PLOT_MARKERS};
  fd->p[0] = (rp_plot_panel){"Z#dDR#u against D#d0#u", "D#d0#u (mm)", "Z#dDR#u (dB)",
                             fd->s, 3, 0, 0, 0};
  fd->p[1] = (rp_plot_panel){NULL, "D#d0#u (mm)", "K#dDP#u (° km#u-1#d)", fd->s, 3, 0, 1, 0};
}

/* -------------------------------------------------------------- panels: good */

static void test_panels_png_has_signature_and_requested_size(void **state) {
  fixture *f = *state;
  figure_data fd;
  make_figure(&fd);
  char path[2048];
  rp_error e = {0};
  in_dir(f, "curve.png", path, sizeof path);
  assert_int_equal(rp_plot_panels(path, fd.p, 2, 2, 900, 600, &e), RP_OK);
  assert_png_of_size(path, 900, 600);
  assert_int_equal(rp_test_count_entries(f->dir), 1); /* no temporary file left */
}

static void test_panels_svg_contains_svg_element_of_requested_size(void **state) {
  fixture *f = *state;
  figure_data fd;
  make_figure(&fd);
  char path[2048];
  rp_error e = {0};
  in_dir(f, "curve.SVG", path, sizeof path); /* extension is case-insensitive */
  assert_int_equal(rp_plot_panels(path, fd.p, 2, 1, 700, 900, &e), RP_OK);
  size_t n = 0;
  unsigned char *b = rp_test_slurp(path, &n);
  assert_non_null(b);
  assert_true(n > 0);
  assert_non_null(strstr((char *)b, "<svg"));
  /* cairo's SVG surface writes the page size as the viewBox, in points */
  assert_non_null(strstr((char *)b, "viewBox=\"0 0 700 900\""));
  free(b);
  assert_int_equal(rp_test_count_entries(f->dir), 1);
}

static void test_panels_pdf_starts_with_pdf_header(void **state) {
  fixture *f = *state;
  figure_data fd;
  make_figure(&fd);
  char path[2048];
  rp_error e = {0};
  in_dir(f, "curve.pdf", path, sizeof path);
  assert_int_equal(rp_plot_panels(path, fd.p, 2, 2, 1000, 500, &e), RP_OK);
  size_t n = 0;
  unsigned char *b = rp_test_slurp(path, &n);
  assert_non_null(b);
  assert_true(n > 5);
  assert_memory_equal(b, "%PDF-", 5); /* ISO 32000-1:2008 §7.5.2 file header (section from memory) */
  free(b);
}

static void test_panels_all_nan_series_and_empty_panel_are_drawn(void **state) {
  fixture *f = *state;
  double x[3] = {NAN, NAN, NAN}, y[3] = {1.0, NAN, 2.0};
  double gx[2] = {1.0, 2.0}, gy[2] = {3.0, 4.0};
  rp_plot_series only_nan[1] = {{"no data", x, y, 3, RP_PLOT_LINE}};
  rp_plot_series mixed[2] = {{"no data", x, y, 3, RP_PLOT_LINE},
                             {NULL, gx, gy, 2, RP_PLOT_LINE_MARKERS}}; /* unlabelled */
  rp_plot_panel p[3] = {{"all NaN", "x", "y", only_nan, 1, 0, 0, 0},
                        {"no series", NULL, NULL, NULL, 0, 1, 1, 0},
                        {"mixed", "x", "y", mixed, 2, 0, 1, 1 /* needs log_x == log_y */}};
  p[2].log_x = 1;
  char path[2048];
  rp_error e = {0};
  in_dir(f, "gaps.png", path, sizeof path);
  assert_int_equal(rp_plot_panels(path, p, 3, 3, 1200, 400, &e), RP_OK);
  assert_png_of_size(path, 1200, 400);
}

static void test_panels_log_axis_skips_nan_points(void **state) {
  fixture *f = *state;
  double x[4] = {1.0, 10.0, NAN, 1000.0}, y[4] = {NAN, 0.5, 3.0, 7.0};
  rp_plot_series s[1] = {{"R", x, y, 4, RP_PLOT_MARKERS}};
  rp_plot_panel p[1] = {{NULL, "Z (mm#u6#d m#u-3#d)", "R (mm h#u-1#d)", s, 1, 1, 1, 0}};
  char path[2048];
  rp_error e = {0};
  in_dir(f, "log.png", path, sizeof path);
  assert_int_equal(rp_plot_panels(path, p, 1, 1, 400, 300, &e), RP_OK);
  assert_png_of_size(path, 400, 300);
}

static void test_panels_replace_existing_file(void **state) {
  fixture *f = *state;
  figure_data fd;
  make_figure(&fd);
  char path[2048];
  rp_error e = {0};
  in_dir(f, "again.png", path, sizeof path);
  FILE *fp = fopen(path, "w");
  assert_non_null(fp);
  fputs("old", fp);
  fclose(fp);
  assert_int_equal(rp_plot_panels(path, fd.p, 1, 1, 500, 400, &e), RP_OK);
  assert_png_of_size(path, 500, 400);
  assert_int_equal(rp_test_count_entries(f->dir), 1);
}

static void test_panels_restore_callers_plplot_stream(void **state) {
  fixture *f = *state;
  figure_data fd;
  make_figure(&fd);
  char path[2048];
  rp_error e = {0};
  PLINT before = -1, after = -2;
  plgstrm(&before);
  in_dir(f, "stream.png", path, sizeof path);
  assert_int_equal(rp_plot_panels(path, fd.p, 2, 2, 600, 400, &e), RP_OK);
  plgstrm(&after);
  assert_int_equal(after, before);
}

/* --------------------------------------------------------------- panels: bad */

static void test_panels_unknown_extension_is_einval(void **state) {
  fixture *f = *state;
  figure_data fd;
  make_figure(&fd);
  char path[2048];
  const char *names[] = {"fig.jpg", "fig", "fig.png.txt", "dir.png/fig"};
  for (size_t i = 0; i < sizeof names / sizeof names[0]; i++) {
    rp_error e = {0};
    in_dir(f, names[i], path, sizeof path);
    assert_int_equal(rp_plot_panels(path, fd.p, 2, 2, 800, 600, &e), RP_EINVAL);
    assert_non_null(strstr(e.msg, "extension"));
  }
  assert_int_equal(rp_test_count_entries(f->dir), 0);
}

static void test_panels_empty_list_is_einval(void **state) {
  fixture *f = *state;
  figure_data fd;
  make_figure(&fd);
  char path[2048];
  rp_error e = {0};
  in_dir(f, "empty.png", path, sizeof path);
  assert_int_equal(rp_plot_panels(path, fd.p, 0, 1, 800, 600, &e), RP_EINVAL);
  assert_non_null(strstr(e.msg, "no panels"));
  assert_int_equal(rp_plot_panels(path, NULL, 2, 1, 800, 600, &e), RP_EINVAL);
  assert_int_equal(rp_test_count_entries(f->dir), 0);
}

static void test_panels_log_axis_with_nonpositive_data_is_einval(void **state) {
  fixture *f = *state;
  double x[3] = {1.0, 2.0, 3.0}, y[3] = {1.0, 0.0, 2.0}, yneg[3] = {1.0, 2.0, -3.0};
  rp_plot_series s[1] = {{"a", x, y, 3, RP_PLOT_LINE}};
  rp_plot_panel p[1] = {{NULL, "x", "y", s, 1, 0, 1, 0}};
  char path[2048];
  rp_error e = {0};
  in_dir(f, "log.png", path, sizeof path);
  assert_int_equal(rp_plot_panels(path, p, 1, 1, 400, 300, &e), RP_EINVAL);
  assert_non_null(strstr(e.msg, "y[1] = 0"));
  assert_non_null(strstr(e.msg, "log"));
  s[0].y = yneg;
  assert_int_equal(rp_plot_panels(path, p, 1, 1, 400, 300, &e), RP_EINVAL);
  assert_non_null(strstr(e.msg, "y[2] = -3"));
  /* on a log x axis */
  s[0].y = x;
  s[0].x = yneg;
  p[0].log_x = 1;
  p[0].log_y = 0;
  assert_int_equal(rp_plot_panels(path, p, 1, 1, 400, 300, &e), RP_EINVAL);
  assert_non_null(strstr(e.msg, "x[2] = -3"));
  assert_int_equal(rp_test_count_entries(f->dir), 0);
}

static void test_panels_missing_folder_is_eio_and_leaves_nothing(void **state) {
  fixture *f = *state;
  figure_data fd;
  make_figure(&fd);
  char path[2048], sub[2048];
  rp_error e = {0};
  in_dir(f, "no-such-folder/fig.png", path, sizeof path);
  assert_int_equal(rp_plot_panels(path, fd.p, 2, 2, 800, 600, &e), RP_EIO);
  assert_non_null(strstr(e.msg, "no-such-folder"));
  struct stat st;
  assert_int_not_equal(stat(in_dir(f, "no-such-folder", sub, sizeof sub), &st), 0);
  assert_int_equal(rp_test_count_entries(f->dir), 0);
}

static void test_panels_bad_arguments_are_einval(void **state) {
  fixture *f = *state;
  figure_data fd;
  make_figure(&fd);
  char path[2048];
  rp_error e = {0};
  in_dir(f, "bad.png", path, sizeof path);

  assert_int_equal(rp_plot_panels(NULL, fd.p, 2, 2, 800, 600, &e), RP_EINVAL);
  assert_int_equal(rp_plot_panels(path, fd.p, 2, 0, 800, 600, &e), RP_EINVAL);
  assert_non_null(strstr(e.msg, "ncols"));
  assert_int_equal(rp_plot_panels(path, fd.p, 2, 2, 10, 600, &e), RP_EINVAL);
  assert_non_null(strstr(e.msg, "10 x 600"));
  assert_int_equal(rp_plot_panels(path, fd.p, 2, 2, 800, 20000, &e), RP_EINVAL);

  /* too many panels for the page, and more than RP_PLOT_MAX_PANELS */
  rp_plot_panel many[RP_PLOT_MAX_PANELS + 1];
  for (int i = 0; i <= RP_PLOT_MAX_PANELS; i++) many[i] = fd.p[0];
  assert_int_equal(rp_plot_panels(path, many, 40, 1, 800, 600, &e), RP_EINVAL);
  assert_non_null(strstr(e.msg, "do not fit"));
  assert_int_equal(rp_plot_panels(path, many, RP_PLOT_MAX_PANELS + 1, 8, 8000, 8000, &e),
                   RP_EINVAL);
  assert_non_null(strstr(e.msg, "at most"));

  fd.s[2].style = 7;
  assert_int_equal(rp_plot_panels(path, fd.p, 2, 2, 800, 600, &e), RP_EINVAL);
  assert_non_null(strstr(e.msg, "style 7"));
  fd.s[2].style = RP_PLOT_MARKERS;

  fd.s[1].y = NULL;
  assert_int_equal(rp_plot_panels(path, fd.p, 2, 2, 800, 600, &e), RP_EINVAL);
  assert_non_null(strstr(e.msg, "NULL"));
  fd.s[1].y = fd.y2;

  fd.y1[5] = INFINITY;
  assert_int_equal(rp_plot_panels(path, fd.p, 2, 2, 800, 600, &e), RP_EINVAL);
  assert_non_null(strstr(e.msg, "y[5] = inf"));
  fd.y1[5] = 1.0;

  fd.p[1].series = NULL;
  assert_int_equal(rp_plot_panels(path, fd.p, 2, 2, 800, 600, &e), RP_EINVAL);
  fd.p[1].series = fd.s;

  fd.p[0].equal_axes_with_diagonal = 1;
  fd.p[0].log_x = 1;
  assert_int_equal(rp_plot_panels(path, fd.p, 2, 2, 800, 600, &e), RP_EINVAL);
  assert_non_null(strstr(e.msg, "1:1"));

  assert_int_equal(rp_test_count_entries(f->dir), 0);
}

/* PLplot allows 100 streams (PL_NSTREAMS in plstrm.h); with all taken, no figure can
 * be opened: that is a plotting failure, reported as RP_EPLOT, and no file is left.
 * (PLplot itself prints "plmkstrm: Cannot create new stream" on stderr here.) */
static void test_panels_without_free_plplot_stream_is_eplot(void **state) {
  fixture *f = *state;
  figure_data fd;
  make_figure(&fd);
  char path[2048];
  rp_error e = {0};
  rp_test_streams streams;
  rp_test_take_streams(&streams);
  in_dir(f, "nostream.png", path, sizeof path);
  rp_status st = rp_plot_panels(path, fd.p, 2, 2, 800, 600, &e);
  rp_test_give_back_streams(&streams);
  assert_int_equal(st, RP_EPLOT);
  assert_int_equal(rp_test_count_entries(f->dir), 0);
  /* and figures work again afterwards */
  assert_int_equal(rp_plot_panels(path, fd.p, 2, 2, 800, 600, &e), RP_OK);
}

/* Without the cairo devices: PLplot would otherwise ask for a device on stdin. PLplot
 * reads its driver list once per process, from PLPLOT_DRV_DIR, so this runs in a fresh
 * copy of this program (see main) whose driver folder lists only the null device. */
static void test_panels_without_cairo_device_is_eplot(void **state) {
  fixture *f = *state;
  char drv[2048], info[2100], path[2048];
  in_dir(f, "drv", drv, sizeof drv);
  assert_int_equal(mkdir(drv, 0755), 0);
  snprintf(info, sizeof info, "%s/null.driver_info", drv);
  FILE *fp = fopen(info, "w");
  assert_non_null(fp);
  fputs("null:Null device:-1:null:42:null\n", fp); /* as PLplot's own null.driver_info */
  fclose(fp);
  in_dir(f, "nodevice.png", path, sizeof path);

  pid_t pid = fork();
  assert_true(pid >= 0);
  if (pid == 0) {
    setenv("PLPLOT_DRV_DIR", drv, 1);
    execl("/proc/self/exe", "test_plot", "--draw-without-device", path, (char *)NULL);
    _exit(127);
  }
  int wst = 0;
  assert_int_equal(waitpid(pid, &wst, 0), pid);
  unlink(info);
  rmdir(drv);
  assert_true(WIFEXITED(wst));
  assert_int_equal(WEXITSTATUS(wst), RP_EPLOT);
  assert_int_equal(rp_test_count_entries(f->dir), 0);
}

/* The child of the test above: draw one figure, exit with its status. */
static int draw_without_device(const char *path) {
  figure_data fd;
  make_figure(&fd);
  rp_error e = {0};
  rp_status st = rp_plot_panels(path, fd.p, 2, 2, 800, 600, &e);
  if (st == RP_EPLOT && strstr(e.msg, "pngcairo") == NULL) return 99;
  return (int)st;
}

/* ---------------------------------------------------------------------- PPI */

#define NR 30
#define NA 72
typedef struct {
  double r[NR], az[NA], v[NA * NR];
  rp_plot_ppi ppi;
} ppi_data;

static void make_ppi(ppi_data *d, int colormap) {
  for (int i = 0; i < NR; i++) d->r[i] = 0.5 + 1.0 * i;
  for (int j = 0; j < NA; j++) d->az[j] = 2.5 + 5.0 * j;
  for (int j = 0; j < NA; j++)
    for (int i = 0; i < NR; i++)
      d->v[j * NR + i] = (i < 3 || j % 9 == 0) ? (double)NAN : 60.0 * sin(0.1 * i) * cos(0.05 * j);
  d->ppi = (rp_plot_ppi){"Invented shower, 0.5° elevation", "Z#dH#u (dBZ)", d->r, NR,
                         d->az, NA, d->v, -10.0, 60.0, colormap};
}

static void test_ppi_png_written_with_requested_size(void **state) {
  fixture *f = *state;
  ppi_data d;
  char path[2048];
  rp_error e = {0};
  make_ppi(&d, RP_PLOT_CMAP_SEQUENTIAL);
  in_dir(f, "ppi.png", path, sizeof path);
  assert_int_equal(rp_plot_ppi_write(path, &d.ppi, 800, 700, &e), RP_OK);
  assert_png_of_size(path, 800, 700);

  /* diverging map, a sector through north (350° .. 40°) and values outside the scale */
  make_ppi(&d, RP_PLOT_CMAP_DIVERGING);
  d.ppi.vmin = -2.0;
  d.ppi.vmax = 4.0;
  for (int j = 0; j < 11; j++) d.az[j] = fmod(350.0 + 5.0 * j, 360.0);
  d.ppi.n_azimuth = 11;
  in_dir(f, "sector.png", path, sizeof path);
  assert_int_equal(rp_plot_ppi_write(path, &d.ppi, 600, 600, &e), RP_OK);
  assert_png_of_size(path, 600, 600);
  assert_int_equal(rp_test_count_entries(f->dir), 2);
}

static void test_ppi_bad_inputs_are_einval(void **state) {
  fixture *f = *state;
  ppi_data d;
  char path[2048];
  rp_error e = {0};
  make_ppi(&d, RP_PLOT_CMAP_SEQUENTIAL);
  in_dir(f, "bad.png", path, sizeof path);

  assert_int_equal(rp_plot_ppi_write(path, NULL, 800, 700, &e), RP_EINVAL);
  assert_int_equal(rp_plot_ppi_write(NULL, &d.ppi, 800, 700, &e), RP_EINVAL);
  assert_int_equal(rp_plot_ppi_write(path, &d.ppi, 800, 7, &e), RP_EINVAL);
  /* 200 px wide: the 11 px text and the colour bar leave no room for the map */
  assert_int_equal(rp_plot_ppi_write(path, &d.ppi, 200, 700, &e), RP_EINVAL);
  assert_non_null(strstr(e.msg, "does not fit"));

  rp_plot_ppi q = d.ppi;
  q.values = NULL;
  assert_int_equal(rp_plot_ppi_write(path, &q, 800, 700, &e), RP_EINVAL);
  q = d.ppi;
  q.n_range = 1;
  assert_int_equal(rp_plot_ppi_write(path, &q, 800, 700, &e), RP_EINVAL);
  q = d.ppi;
  q.vmin = 5.0;
  q.vmax = 5.0;
  assert_int_equal(rp_plot_ppi_write(path, &q, 800, 700, &e), RP_EINVAL);
  assert_non_null(strstr(e.msg, "colour scale"));
  q.vmin = NAN;
  assert_int_equal(rp_plot_ppi_write(path, &q, 800, 700, &e), RP_EINVAL);
  q = d.ppi;
  q.colormap = 2;
  assert_int_equal(rp_plot_ppi_write(path, &q, 800, 700, &e), RP_EINVAL);
  assert_non_null(strstr(e.msg, "colour map 2"));

  d.r[4] = d.r[3];
  assert_int_equal(rp_plot_ppi_write(path, &d.ppi, 800, 700, &e), RP_EINVAL);
  assert_non_null(strstr(e.msg, "range_km[4]"));
  d.r[4] = 4.5;
  d.r[0] = -0.5;
  assert_int_equal(rp_plot_ppi_write(path, &d.ppi, 800, 700, &e), RP_EINVAL);
  d.r[0] = NAN;
  assert_int_equal(rp_plot_ppi_write(path, &d.ppi, 800, 700, &e), RP_EINVAL);
  d.r[0] = 0.5;

  d.az[10] = d.az[9] + 360.0; /* same direction twice */
  assert_int_equal(rp_plot_ppi_write(path, &d.ppi, 800, 700, &e), RP_EINVAL);
  assert_non_null(strstr(e.msg, "repeats"));
  d.az[10] = d.az[9] - 5.0; /* a step back: more than a full turn in scan order */
  assert_int_equal(rp_plot_ppi_write(path, &d.ppi, 800, 700, &e), RP_EINVAL);
  assert_non_null(strstr(e.msg, "360"));
  d.az[10] = INFINITY;
  assert_int_equal(rp_plot_ppi_write(path, &d.ppi, 800, 700, &e), RP_EINVAL);
  d.az[10] = 52.5;

  d.v[100] = -INFINITY;
  assert_int_equal(rp_plot_ppi_write(path, &d.ppi, 800, 700, &e), RP_EINVAL);
  assert_non_null(strstr(e.msg, "infinite"));
  d.v[100] = 1.0;

  in_dir(f, "bad.gif", path, sizeof path);
  assert_int_equal(rp_plot_ppi_write(path, &d.ppi, 800, 700, &e), RP_EINVAL);
  assert_int_equal(rp_test_count_entries(f->dir), 0);
}

static void test_ppi_missing_folder_is_eio_and_leaves_nothing(void **state) {
  fixture *f = *state;
  ppi_data d;
  char path[2048];
  rp_error e = {0};
  make_ppi(&d, RP_PLOT_CMAP_DIVERGING);
  in_dir(f, "nowhere/ppi.svg", path, sizeof path);
  assert_int_equal(rp_plot_ppi_write(path, &d.ppi, 800, 700, &e), RP_EIO);
  assert_int_equal(rp_test_count_entries(f->dir), 0);
}

/* ------------------------------------------------------------- colour maps */

/* sRGB (8 bit) -> CIE L*a*b* (D65): IEC 61966-2-1 decoding and matrix, CIE 15:2004
 * L*a*b* formulas. Written independently of the library's inverse conversion. */
static void srgb_to_lab(const unsigned char rgb[3], double lab[3]) {
  double c[3];
  for (int i = 0; i < 3; i++) {
    double v = rgb[i] / 255.0;
    c[i] = v <= 0.04045 ? v / 12.92 : pow((v + 0.055) / 1.055, 2.4);
  }
  double x = (0.4124 * c[0] + 0.3576 * c[1] + 0.1805 * c[2]) / 0.95047;
  double y = 0.2126 * c[0] + 0.7152 * c[1] + 0.0722 * c[2];
  double z = (0.0193 * c[0] + 0.1192 * c[1] + 0.9505 * c[2]) / 1.08883;
  double t[3] = {x, y, z}, fv[3];
  for (int i = 0; i < 3; i++)
    fv[i] = t[i] > 216.0 / 24389.0 ? cbrt(t[i]) : (24389.0 / 27.0 * t[i] + 16.0) / 116.0;
  lab[0] = 116.0 * fv[1] - 16.0;
  lab[1] = 500.0 * (fv[0] - fv[1]);
  lab[2] = 200.0 * (fv[1] - fv[2]);
}

static void cmap_lab(int cmap, int k, double lab[3]) {
  unsigned char rgb[3];
  assert_int_equal(rp_plot_colormap_rgb(cmap, k / 255.0, rgb, NULL), RP_OK);
  srgb_to_lab(rgb, lab);
}

static void test_sequential_map_ends_and_rising_lightness(void **state) {
  (void)state;
  unsigned char rgb[3];
  /* End colours of viridis, #440154 and #FDE725: the ends of matplotlib's viridis table
   * (van der Walt & Smith 2015), values from memory. Exact: they are our anchors. */
  assert_int_equal(rp_plot_colormap_rgb(RP_PLOT_CMAP_SEQUENTIAL, 0.0, rgb, NULL), RP_OK);
  assert_int_equal(rgb[0], 0x44);
  assert_int_equal(rgb[1], 0x01);
  assert_int_equal(rgb[2], 0x54);
  assert_int_equal(rp_plot_colormap_rgb(RP_PLOT_CMAP_SEQUENTIAL, 1.0, rgb, NULL), RP_OK);
  assert_int_equal(rgb[0], 0xFD);
  assert_int_equal(rgb[1], 0xE7);
  assert_int_equal(rgb[2], 0x25);
  /* Lightness rises monotonically along viridis (van der Walt & Smith 2015, the design
   * goal). Between neighbours the 8-bit rounding can undo a step of ~0.3 L*, so the
   * check is over pairs two entries apart (smallest rise there is ~0.27 L*). */
  for (int k = 0; k + 2 < 256; k++) {
    double a[3], b[3];
    cmap_lab(RP_PLOT_CMAP_SEQUENTIAL, k, a);
    cmap_lab(RP_PLOT_CMAP_SEQUENTIAL, k + 2, b);
    assert_true(b[0] > a[0]);
  }
}

static void test_diverging_map_is_symmetric_and_uniform_in_lab(void **state) {
  (void)state;
  /* Round trip Lab -> sRGB (library) -> Lab (test): the anchors come back within
   * 0.5 ΔE (8-bit rounding moves a colour by at most ~0.3 ΔE here). */
  static const double anchors[3][3] = {{40.0, 17.0, -52.0}, {88.0, 0.0, 0.0}, {40.0, 45.0, 31.5}};
  double lab[3];
  cmap_lab(RP_PLOT_CMAP_DIVERGING, 0, lab);
  for (int c = 0; c < 3; c++) assert_close(lab[c], anchors[0][c], 0.0, 0.5);
  cmap_lab(RP_PLOT_CMAP_DIVERGING, 255, lab);
  for (int c = 0; c < 3; c++) assert_close(lab[c], anchors[2][c], 0.0, 0.5);
  /* the centre (t = 0.5 lies between entries 127 and 128) is the neutral anchor */
  cmap_lab(RP_PLOT_CMAP_DIVERGING, 128, lab);
  assert_close(lab[0], 88.0, 0.0, 0.5);

  /* Symmetric lightness: L*(k) = L*(255 - k) within 0.5 (rounding). */
  for (int k = 0; k < 128; k++) {
    double a[3], b[3];
    cmap_lab(RP_PLOT_CMAP_DIVERGING, k, a);
    cmap_lab(RP_PLOT_CMAP_DIVERGING, 255 - k, b);
    assert_close(a[0], b[0], 0.0, 0.5);
  }
  /* Uniform: on each arm the CIE76 colour difference over 16 entries is the arm length
   * / 127.5 * 16 (about 9.1 ΔE); 8-bit rounding of both ends allows ±12 %. */
  for (int arm = 0; arm < 2; arm++) {
    const double *p = anchors[arm], *q = anchors[arm + 1];
    double len = sqrt((q[0] - p[0]) * (q[0] - p[0]) + (q[1] - p[1]) * (q[1] - p[1]) +
                      (q[2] - p[2]) * (q[2] - p[2]));
    double expect = len / 127.5 * 16.0;
    int k0 = arm == 0 ? 0 : 128, k1 = arm == 0 ? 127 - 16 : 255 - 16;
    for (int k = k0; k <= k1; k++) {
      double a[3], b[3];
      cmap_lab(RP_PLOT_CMAP_DIVERGING, k, a);
      cmap_lab(RP_PLOT_CMAP_DIVERGING, k + 16, b);
      double de = sqrt((a[0] - b[0]) * (a[0] - b[0]) + (a[1] - b[1]) * (a[1] - b[1]) +
                       (a[2] - b[2]) * (a[2] - b[2]));
      assert_close(de, expect, 0.12, 0.0);
    }
  }
}

static void test_colormap_bad_arguments_are_einval(void **state) {
  (void)state;
  unsigned char rgb[3];
  rp_error e = {0};
  assert_int_equal(rp_plot_colormap_rgb(3, 0.5, rgb, &e), RP_EINVAL);
  assert_non_null(strstr(e.msg, "colour map 3"));
  assert_int_equal(rp_plot_colormap_rgb(0, NAN, rgb, &e), RP_EINVAL);
  assert_int_equal(rp_plot_colormap_rgb(0, 1.5, rgb, &e), RP_EINVAL);
  assert_non_null(strstr(e.msg, "1.5"));
  assert_int_equal(rp_plot_colormap_rgb(1, 0.5, NULL, &e), RP_EINVAL);
}

int main(int argc, char **argv) {
  rp_test_init();
  if (argc == 3 && strcmp(argv[1], "--draw-without-device") == 0)
    return draw_without_device(argv[2]);
  const struct CMUnitTest tests[] = {
      cmocka_unit_test_setup_teardown(test_panels_png_has_signature_and_requested_size, setup, teardown),
      cmocka_unit_test_setup_teardown(test_panels_svg_contains_svg_element_of_requested_size, setup, teardown),
      cmocka_unit_test_setup_teardown(test_panels_pdf_starts_with_pdf_header, setup, teardown),
      cmocka_unit_test_setup_teardown(test_panels_all_nan_series_and_empty_panel_are_drawn, setup, teardown),
      cmocka_unit_test_setup_teardown(test_panels_log_axis_skips_nan_points, setup, teardown),
      cmocka_unit_test_setup_teardown(test_panels_replace_existing_file, setup, teardown),
      cmocka_unit_test_setup_teardown(test_panels_restore_callers_plplot_stream, setup, teardown),
      cmocka_unit_test_setup_teardown(test_panels_unknown_extension_is_einval, setup, teardown),
      cmocka_unit_test_setup_teardown(test_panels_empty_list_is_einval, setup, teardown),
      cmocka_unit_test_setup_teardown(test_panels_log_axis_with_nonpositive_data_is_einval, setup, teardown),
      cmocka_unit_test_setup_teardown(test_panels_missing_folder_is_eio_and_leaves_nothing, setup, teardown),
      cmocka_unit_test_setup_teardown(test_panels_bad_arguments_are_einval, setup, teardown),
      cmocka_unit_test_setup_teardown(test_panels_without_free_plplot_stream_is_eplot, setup, teardown),
      cmocka_unit_test_setup_teardown(test_panels_without_cairo_device_is_eplot, setup, teardown),
      cmocka_unit_test_setup_teardown(test_ppi_png_written_with_requested_size, setup, teardown),
      cmocka_unit_test_setup_teardown(test_ppi_bad_inputs_are_einval, setup, teardown),
      cmocka_unit_test_setup_teardown(test_ppi_missing_folder_is_eio_and_leaves_nothing, setup, teardown),
      cmocka_unit_test(test_sequential_map_ends_and_rising_lightness),
      cmocka_unit_test(test_diverging_map_is_symmetric_and_uniform_in_lab),
      cmocka_unit_test(test_colormap_bad_arguments_are_einval),
  };
  return cmocka_run_group_tests_name("plot", tests, NULL, NULL);
}
