/* test_figure.c — the figure API: every panel kind writes a complete PNG, SVG and PDF;
 * pictures never lie (full disk, '%' names, symlinks, modes, draw-then-commit); bad input
 * gets the right status; ticks keep one label style per axis and axis ranges follow the
 * data; missing values (NaN) are not drawn; the colour maps keep their properties.
 *
 * Each test works in a fresh folder under the build directory (RP_BINARY_DIR, else /tmp)
 * and checks that nothing but the expected files is left there. */
#define _GNU_SOURCE
#include "rp_test.h"
#include "rp_test_plplot.h"

#include <dirent.h>
#include <errno.h>
#include <plplot.h>
#include <fcntl.h>
#include <string.h>
#include <sys/mount.h>
#include <sys/stat.h>
#include <unistd.h>

#include "rainprint/figure.h"
#include "rainprint/plot.h"

/* ------------------------------------------------------------------ fixture */

typedef struct {
  char dir[1024];
  int mounted;
} fixture;

static int setup(void **state) {
  fixture *f = calloc(1, sizeof *f);
  if (f == NULL) return -1;
  const char *base = getenv("RP_BINARY_DIR");
  snprintf(f->dir, sizeof f->dir, "%s/test_figure_XXXXXX", base != NULL ? base : "/tmp");
  if (mkdtemp(f->dir) == NULL) {
    free(f);
    return -1;
  }
  *state = f;
  return 0;
}

static void empty_dir(const char *dir) {
  DIR *d = opendir(dir);
  if (d == NULL) return;
  struct dirent *e;
  while ((e = readdir(d)) != NULL) {
    if (strcmp(e->d_name, ".") == 0 || strcmp(e->d_name, "..") == 0) continue;
    char p[2048];
    snprintf(p, sizeof p, "%s/%s", dir, e->d_name);
    if (unlink(p) != 0 && errno == EISDIR) {
      empty_dir(p);
      rmdir(p);
    }
  }
  closedir(d);
}

static int teardown(void **state) {
  fixture *f = *state;
  if (f->mounted) umount(f->dir);
  empty_dir(f->dir);
  rmdir(f->dir);
  free(f);
  return 0;
}

static const char *in_dir(const fixture *f, const char *name, char *buf, size_t n) {
  snprintf(buf, n, "%s/%s", f->dir, name);
  return buf;
}



static void write_bytes(const char *path, const void *b, size_t n) {
  FILE *fp = fopen(path, "wb");
  assert_non_null(fp);
  assert_int_equal(fwrite(b, 1, n, fp), n);
  fclose(fp);
}

static uint32_t be32(const unsigned char *p) {
  return ((uint32_t)p[0] << 24) | ((uint32_t)p[1] << 16) | ((uint32_t)p[2] << 8) | p[3];
}

/* A PNG of w x h: signature, IHDR first (ISO/IEC 15948:2004 §5.2, §11.2.2, section numbers
 * from memory), and complete (rp_figure_check_file: the IEND chunk last). */
static void assert_png_of_size(const char *path, uint32_t w, uint32_t h) {
  size_t n = 0;
  unsigned char *b = rp_test_slurp(path, &n);
  assert_non_null(b);
  assert_true(n > 33);
  assert_memory_equal(b + 12, "IHDR", 4);
  assert_int_equal(be32(b + 16), w);
  assert_int_equal(be32(b + 20), h);
  free(b);
  rp_error e = {0};
  assert_int_equal(rp_figure_check_file(path, &e), RP_OK);
}

/* ------------------------------------------------------------------ test data */

#define NPT 40
#define NSC 3000
#define NR 24
#define NA 36
#define NG 20
#define NRAY 8

typedef struct {
  double x[NPT], y1[NPT], y2[NPT];
  double sx[NSC], sy[NSC];
  double r[NR], gr[NR], az[NA], v[NA * NR];
  double cg[(NRAY + 1) * (NG + 1)], ch[(NRAY + 1) * (NG + 1)], rv[NRAY * NG];
  rp_figure_series s[2], ss[2];
  rp_figure_panel p[4];
  rp_figure fig;
} demo;

/* Four panels, one of each kind, with NaN gaps and NaN cells; an invented scenario. */
static void make_demo(demo *d) {
  memset(d, 0, sizeof *d);
  for (int i = 0; i < NPT; i++) {
    d->x[i] = 0.8 + 2.2 * i / (NPT - 1);
    d->y1[i] = 0.3 * d->x[i] * d->x[i];
    d->y2[i] = i % 7 == 3 ? (double)NAN : 0.2 + 0.5 * d->x[i];
  }
  for (int i = 0; i < NSC; i++) { /* deterministic cloud about y = x */
    d->sx[i] = 1.0 + 99.0 * fmod(0.618034 * i, 1.0);
    d->sy[i] = d->sx[i] * (1.0 + 0.2 * sin(1.7 * i));
  }
  for (int i = 0; i < NR; i++) { d->r[i] = 1.0 + 2.0 * i; d->gr[i] = 0.99 * d->r[i]; }
  for (int j = 0; j < NA; j++) d->az[j] = 5.0 + 10.0 * j;
  for (int j = 0; j < NA; j++)
    for (int i = 0; i < NR; i++)
      d->v[j * NR + i] = (i < 2 || j == 7) ? (double)NAN : 50.0 * sin(0.12 * i) * cos(0.1 * j);
  for (int j = 0; j <= NRAY; j++)
    for (int i = 0; i <= NG; i++) {
      double el = 1.5 * j * M_PI / 180.0, rr = 2.0 * i;
      d->cg[j * (NG + 1) + i] = rr * cos(el);
      d->ch[j * (NG + 1) + i] = rr * sin(el) + rr * rr / (2.0 * 8494.0); /* 4/3 earth */
    }
  for (int k = 0; k < NRAY * NG; k++) d->rv[k] = k % 11 == 0 ? (double)NAN : 2.0 * sin(0.3 * k);
  d->s[0] = (rp_figure_series){"S band", d->x, d->y1, NPT, RP_FIGURE_STYLE_LINE};
  d->s[1] = (rp_figure_series){"C band", d->x, d->y2, NPT, RP_FIGURE_STYLE_LINE_MARKERS};
  d->ss[0] = (rp_figure_series){"samples", d->sx, d->sy, NSC, RP_FIGURE_STYLE_MARKERS};
  d->ss[1] = (rp_figure_series){"fitted", d->sx, d->sx, 50, RP_FIGURE_STYLE_LINE};
  d->p[0].kind = RP_FIGURE_LINES;
  d->p[0].title = "Z#dDR#u against D#d0#u";
  d->p[0].subtitle = "S and C band, 10 °C, invented ensemble";
  d->p[0].xlabel = "D#d0#u (mm)";
  d->p[0].ylabel = "Z#dDR#u (dB)";
  d->p[0].xy = (rp_figure_xy){d->s, 2, 1, 0, 0, 0};
  d->p[1].kind = RP_FIGURE_SCATTER;
  d->p[1].title = "fitted against true";
  d->p[1].xlabel = "true R (mm h#u-1#d)";
  d->p[1].ylabel = "fitted R (mm h#u-1#d)";
  d->p[1].xy = (rp_figure_xy){d->ss, 2, 1, 1, 1, 1000}; /* 3000 points > 1000: density */
  d->p[2].kind = RP_FIGURE_PPI;
  d->p[2].title = "Z#dH#u";
  d->p[2].ppi = (rp_figure_ppi){d->r, NR, d->gr, d->az, NA, d->v};
  d->p[2].scale = (rp_figure_scale){-10.0, 60.0, RP_FIGURE_CMAP_VIRIDIS, "Z#dH#u (dBZ)"};
  d->p[3].kind = RP_FIGURE_RHI;
  d->p[3].title = "Z#dDR#u";
  d->p[3].rhi = (rp_figure_rhi){NG, NRAY, d->cg, d->ch, d->rv};
  d->p[3].scale = (rp_figure_scale){-3.0, 3.0, RP_FIGURE_CMAP_DIVERGING, "Z#dDR#u (dB)"};
  d->fig = (rp_figure){"Invented Hollowmere storm", "synthetic data", d->p, 4, 2, 1000, 800};
}

/* ------------------------------------------------------------- every kind */

static void test_every_panel_kind_writes_complete_png_svg_pdf(void **state) {
  fixture *f = *state;
  demo d;
  make_demo(&d);
  static const char *names[] = {"all.png", "all.svg", "all.pdf"};
  char path[2048];
  for (int k = 0; k < 4; k++) { /* each kind alone, then all four together */
    for (int m = 0; m < 3; m++) {
      rp_figure one = d.fig;
      one.panels = &d.p[k];
      one.n_panels = 1;
      one.width_px = 600;
      one.height_px = 500;
      rp_error e = {0};
      in_dir(f, names[m], path, sizeof path);
      assert_int_equal(rp_figure_write(path, &one, &e), RP_OK);
      assert_int_equal(rp_figure_check_file(path, &e), RP_OK);
      if (m == 0) assert_png_of_size(path, 600, 500);
    }
  }
  for (int m = 0; m < 3; m++) {
    rp_error e = {0};
    in_dir(f, names[m], path, sizeof path);
    assert_int_equal(rp_figure_write(path, &d.fig, &e), RP_OK);
    assert_int_equal(rp_figure_check_file(path, &e), RP_OK);
  }
  assert_png_of_size(in_dir(f, names[0], path, sizeof path), 1000, 800);
  assert_int_equal(rp_test_count_entries(f->dir), 3); /* no temporary file left */
}

/* Missing values: a NaN point is not drawn and does not move the axes, so a markers
 * series with a NaN point gives the same PNG, byte for byte, as the series without that
 * point (pngcairo output is deterministic for the same drawing; SVG is not, cairo numbers
 * its surfaces per process). A −99 dB floor passed as data changes the picture. */
static void test_nan_points_are_not_drawn(void **state) {
  fixture *f = *state;
  double x1[5] = {1.0, 2.0, 3.0, 4.0, 5.0}, y1[5] = {1.0, 2.0, NAN, 3.0, 2.5};
  double x2[4] = {1.0, 2.0, 4.0, 5.0}, y2[4] = {1.0, 2.0, 3.0, 2.5};
  double y3[5] = {1.0, 2.0, -99.0, 3.0, 2.5};
  rp_figure_series s = {"LDR", x1, y1, 5, RP_FIGURE_STYLE_MARKERS};
  rp_figure_panel p = {0};
  p.kind = RP_FIGURE_LINES;
  p.xlabel = "D (mm)";
  p.ylabel = "LDR (dB)";
  p.xy.series = &s;
  p.xy.n_series = 1;
  rp_figure fig = {NULL, NULL, &p, 1, 1, 500, 400};
  char a[2048], b[2048], c[2048];
  rp_error e = {0};
  assert_int_equal(rp_figure_write(in_dir(f, "nan.png", a, sizeof a), &fig, &e), RP_OK);
  s = (rp_figure_series){"LDR", x2, y2, 4, RP_FIGURE_STYLE_MARKERS};
  assert_int_equal(rp_figure_write(in_dir(f, "without.png", b, sizeof b), &fig, &e), RP_OK);
  s = (rp_figure_series){"LDR", x1, y3, 5, RP_FIGURE_STYLE_MARKERS};
  assert_int_equal(rp_figure_write(in_dir(f, "floor.png", c, sizeof c), &fig, &e), RP_OK);
  size_t na = 0, nb = 0, nc = 0;
  unsigned char *ba = rp_test_slurp(a, &na), *bb = rp_test_slurp(b, &nb), *bc = rp_test_slurp(c, &nc);
  assert_non_null(ba);
  assert_non_null(bb);
  assert_non_null(bc);
  assert_int_equal(na, nb);
  assert_memory_equal(ba, bb, na);
  assert_true(nc != na || memcmp(ba, bc, na) != 0); /* the check can fail */
  free(ba);
  free(bb);
  free(bc);
}

/* ---------------------------------------------------------- files never lie */

/* Full disk: a 64 KiB tmpfs filled to the last byte; drawing must fail with the system's
 * reason and leave nothing. Needs root (mount); skipped otherwise. */
static void test_full_disk_is_eio_with_reason_and_leaves_nothing(void **state) {
  fixture *f = *state;
  if (geteuid() != 0 || mount("tmpfs", f->dir, "tmpfs", 0, "size=64k") != 0) {
    print_message("skipped: mounting a small tmpfs needs root (%s)\n", strerror(errno));
    skip();
  }
  f->mounted = 1;
  char fill[2048], path[2048];
  in_dir(f, "fill", fill, sizeof fill);
  int fd = open(fill, O_WRONLY | O_CREAT, 0644);
  assert_true(fd >= 0);
  static char block[4096];
  while (write(fd, block, sizeof block) > 0) {}
  while (write(fd, block, 1) > 0) {}
  close(fd);
  demo d;
  make_demo(&d);
  static const char *names[] = {"full.png", "full.svg", "full.pdf"};
  for (int m = 0; m < 3; m++) {
    rp_error e = {0};
    in_dir(f, names[m], path, sizeof path);
    assert_int_equal(rp_figure_write(path, &d.fig, &e), RP_EIO);
    assert_non_null(strstr(e.msg, strerror(ENOSPC)));
    assert_int_equal(rp_test_count_entries(f->dir), 1); /* only the filler */
  }
  /* the old API reports it too */
  rp_plot_series os = {"a", d.x, d.y1, NPT, RP_PLOT_LINE};
  rp_plot_panel op = {NULL, "x", "y", &os, 1, 0, 0, 0};
  rp_error e = {0};
  assert_int_equal(rp_plot_panels(in_dir(f, "old.png", path, sizeof path), &op, 1, 1, 600, 400, &e),
                   RP_EIO);
  assert_int_equal(rp_test_count_entries(f->dir), 1);
}

static void test_percent_in_name_is_literal(void **state) {
  fixture *f = *state;
  demo d;
  make_demo(&d);
  char path[2048];
  rp_error e = {0};
  in_dir(f, "p%n%d%s.png", path, sizeof path);
  assert_int_equal(rp_figure_write(path, &d.fig, &e), RP_OK);
  assert_png_of_size(path, 1000, 800);
  assert_int_equal(rp_test_count_entries(f->dir), 1); /* no stray temporary or expanded name */
}

static void test_symlink_is_written_through_and_mode_kept(void **state) {
  fixture *f = *state;
  demo d;
  make_demo(&d);
  char target[2048], link[2048], sub[2048];
  rp_error e = {0};
  assert_int_equal(mkdir(in_dir(f, "out", sub, sizeof sub), 0755), 0);
  in_dir(f, "out/real.png", target, sizeof target);
  write_bytes(target, "old", 3);
  assert_int_equal(chmod(target, 0640), 0);
  in_dir(f, "link.png", link, sizeof link);
  assert_int_equal(symlink("out/real.png", link), 0); /* relative link */
  assert_int_equal(rp_figure_write(link, &d.fig, &e), RP_OK);
  struct stat st;
  assert_int_equal(lstat(link, &st), 0);
  assert_true(S_ISLNK(st.st_mode));
  assert_png_of_size(target, 1000, 800);
  assert_int_equal(stat(target, &st), 0);
  assert_int_equal(st.st_mode & 07777, 0640);
  assert_int_equal(rp_test_count_entries(sub), 1);
  assert_int_equal(rp_test_count_entries(f->dir), 2);

  /* a dangling link: the target is created */
  char dangling[2048], t2[2048];
  in_dir(f, "dangling.svg", dangling, sizeof dangling);
  assert_int_equal(symlink("out/new.svg", dangling), 0);
  assert_int_equal(rp_figure_write(dangling, &d.fig, &e), RP_OK);
  assert_int_equal(rp_figure_check_file(in_dir(f, "out/new.svg", t2, sizeof t2), &e), RP_OK);
  assert_int_equal(lstat(dangling, &st), 0);
  assert_true(S_ISLNK(st.st_mode));

  /* a plain existing file keeps its bits; a new one gets the umask's */
  char plain[2048];
  in_dir(f, "plain.pdf", plain, sizeof plain);
  write_bytes(plain, "x", 1);
  assert_int_equal(chmod(plain, 0604), 0);
  assert_int_equal(rp_figure_write(plain, &d.fig, &e), RP_OK);
  assert_int_equal(stat(plain, &st), 0);
  assert_int_equal(st.st_mode & 07777, 0604);
  mode_t old = umask(027);
  char fresh[2048];
  in_dir(f, "fresh.png", fresh, sizeof fresh);
  assert_int_equal(rp_figure_write(fresh, &d.fig, &e), RP_OK);
  umask(old);
  assert_int_equal(stat(fresh, &st), 0);
  assert_int_equal(st.st_mode & 07777, 0640);
}

static void test_draw_temp_then_commit_or_discard(void **state) {
  fixture *f = *state;
  demo d;
  make_demo(&d);
  char path[2048], tmp[4096];
  rp_error e = {0};
  in_dir(f, "later.png", path, sizeof path);
  assert_int_equal(rp_figure_draw_temp(path, &d.fig, tmp, sizeof tmp, &e), RP_OK);
  assert_null(strchr(strrchr(tmp, '/'), '%'));
  assert_int_equal(rp_figure_check_file(tmp, &e), RP_OK); /* complete already */
  struct stat st;
  assert_int_not_equal(stat(path, &st), 0);               /* not yet in place */
  assert_int_equal(rp_figure_commit(tmp, path, &e), RP_OK);
  assert_png_of_size(path, 1000, 800);
  assert_int_equal(rp_test_count_entries(f->dir), 1);

  assert_int_equal(rp_figure_draw_temp(path, &d.fig, tmp, sizeof tmp, &e), RP_OK);
  assert_int_equal(rp_test_count_entries(f->dir), 2);
  rp_figure_discard(tmp);
  rp_figure_discard(NULL);
  rp_figure_discard("");
  assert_int_equal(rp_test_count_entries(f->dir), 1);

  /* a tmp buffer that is too short: EINVAL, nothing left */
  char small[8];
  assert_int_equal(rp_figure_draw_temp(path, &d.fig, small, sizeof small, &e), RP_EINVAL);
  assert_string_equal(small, "");
  assert_int_equal(rp_figure_draw_temp(path, &d.fig, NULL, 0, &e), RP_EINVAL);
  assert_int_equal(rp_test_count_entries(f->dir), 1);

  /* commit: NULL arguments; a rename into a missing folder fails and removes tmp */
  assert_int_equal(rp_figure_commit(NULL, path, &e), RP_EINVAL);
  assert_int_equal(rp_figure_commit(tmp, NULL, &e), RP_EINVAL);
  assert_int_equal(rp_figure_draw_temp(path, &d.fig, tmp, sizeof tmp, &e), RP_OK);
  char bad[2048];
  assert_int_equal(rp_figure_commit(tmp, in_dir(f, "none/x.png", bad, sizeof bad), &e), RP_EIO);
  assert_non_null(strstr(e.msg, strerror(ENOENT)));
  assert_int_equal(rp_test_count_entries(f->dir), 1);
}

static void test_check_file_finds_truncated_pictures(void **state) {
  fixture *f = *state;
  demo d;
  make_demo(&d);
  static const char *names[] = {"t.png", "t.svg", "t.pdf"};
  for (int m = 0; m < 3; m++) {
    char path[2048];
    rp_error e = {0};
    in_dir(f, names[m], path, sizeof path);
    assert_int_equal(rp_figure_write(path, &d.fig, &e), RP_OK);
    size_t n = 0;
    unsigned char *b = rp_test_slurp(path, &n);
    assert_non_null(b);
    write_bytes(path, b, n - 20); /* cut the end off */
    assert_int_equal(rp_figure_check_file(path, &e), RP_EPLOT);
    write_bytes(path, b, 0);
    assert_int_equal(rp_figure_check_file(path, &e), RP_EPLOT);
    assert_non_null(strstr(e.msg, "empty"));
    write_bytes(path, b, n);
    assert_int_equal(rp_figure_check_file(path, &e), RP_OK);
    free(b);
  }
  rp_error e = {0};
  char path[2048];
  assert_int_equal(rp_figure_check_file(NULL, &e), RP_EINVAL);
  assert_int_equal(rp_figure_check_file("x.gif", &e), RP_EINVAL);
  assert_int_equal(rp_figure_check_file(in_dir(f, "missing.png", path, sizeof path), &e), RP_EIO);
}

/* ------------------------------------------------------------------ statuses */

static void test_bad_figures_are_einval_and_leave_nothing(void **state) {
  fixture *f = *state;
  demo d;
  make_demo(&d);
  char path[2048];
  rp_error e = {0};
  in_dir(f, "bad.png", path, sizeof path);
#define EXPECT_EINVAL(text)                                                  \
  do {                                                                       \
    assert_int_equal(rp_figure_write(path, &d.fig, &e), RP_EINVAL);          \
    assert_non_null(strstr(e.msg, text));                                    \
    make_demo(&d);                                                           \
  } while (0)
  assert_int_equal(rp_figure_write(NULL, &d.fig, &e), RP_EINVAL);
  assert_int_equal(rp_figure_write(path, NULL, &e), RP_EINVAL);
  assert_int_equal(rp_figure_write(in_dir(f, "bad.jpg", path, sizeof path), &d.fig, &e), RP_EINVAL);
  assert_non_null(strstr(e.msg, "extension"));
  in_dir(f, "bad.png", path, sizeof path);
  d.fig.n_panels = 0;                EXPECT_EINVAL("no panels");
  d.fig.n_panels = 65;               EXPECT_EINVAL("at most");
  d.fig.ncols = 0;                   EXPECT_EINVAL("ncols");
  d.fig.width_px = 199;              EXPECT_EINVAL("199 x 800");
  d.fig.height_px = 10001;           EXPECT_EINVAL("outside");
  d.fig.width_px = 300;              EXPECT_EINVAL("do not fit");
  d.p[0].kind = 9;                   EXPECT_EINVAL("kind 9");
  d.s[1].style = 5;                  EXPECT_EINVAL("style 5");
  d.s[1].y = NULL;                   EXPECT_EINVAL("NULL");
  d.p[0].xy.series = NULL;           EXPECT_EINVAL("NULL");
  d.y1[3] = INFINITY;                EXPECT_EINVAL("y[3] = inf");
  d.x[0] = -1.0;                     EXPECT_EINVAL("log x axis");
  d.p[1].xy.log_y = 0;               EXPECT_EINVAL("1:1");
  d.p[2].ppi.values = NULL;          EXPECT_EINVAL("PPI");
  d.p[2].ppi.n_azimuth = 1;          EXPECT_EINVAL(">= 2 azimuths");
  d.r[5] = d.r[4];                   EXPECT_EINVAL("range_km[5]");
  d.gr[0] = -1.0;                    EXPECT_EINVAL("ground_range_km[0]");
  d.az[3] = d.az[2];                 EXPECT_EINVAL("repeats");
  d.az[3] = d.az[2] - 1.0;           EXPECT_EINVAL("360");
  d.az[3] = NAN;                     EXPECT_EINVAL("azimuth_deg[3]");
  d.v[10] = INFINITY;                EXPECT_EINVAL("infinite");
  d.p[2].scale.vmin = 70.0;          EXPECT_EINVAL("colour scale");
  d.p[2].scale.vmax = NAN;           EXPECT_EINVAL("colour scale");
  d.p[3].scale.colormap = 4;         EXPECT_EINVAL("colour map 4");
  d.p[3].rhi.corner_height_km = NULL; EXPECT_EINVAL("RHI");
  d.p[3].rhi.n_ray = 0;              EXPECT_EINVAL("RHI");
  d.cg[4] = NAN;                     EXPECT_EINVAL("corner_ground_km[4]");
  d.ch[4] = 500.0;                   EXPECT_EINVAL("corner_height_km[4]");
  d.rv[2] = -INFINITY;               EXPECT_EINVAL("infinite");
  /* a PPI needs room for its square map and colour bar */
  d.fig.panels = &d.p[2];
  d.fig.n_panels = 1;
  d.fig.width_px = 260;
  d.fig.height_px = 900;
  EXPECT_EINVAL("does not fit");
#undef EXPECT_EINVAL
  assert_int_equal(rp_test_count_entries(f->dir), 0);
}

static void test_missing_folder_is_eio_and_leaves_nothing(void **state) {
  fixture *f = *state;
  demo d;
  make_demo(&d);
  char path[2048];
  rp_error e = {0};
  in_dir(f, "no-such-folder/fig.svg", path, sizeof path);
  assert_int_equal(rp_figure_write(path, &d.fig, &e), RP_EIO);
  assert_non_null(strstr(e.msg, strerror(ENOENT)));
  assert_int_equal(rp_test_count_entries(f->dir), 0);
}

/* PLplot allows 100 streams (PL_NSTREAMS in plstrm.h); with all taken no figure can be
 * opened: RP_EPLOT and no file left (PLplot itself prints "plmkstrm: Cannot create new
 * stream" on stderr here). */
static void test_no_free_plplot_stream_is_eplot(void **state) {
  fixture *f = *state;
  demo d;
  make_demo(&d);
  char path[2048];
  rp_error e = {0};
  rp_test_streams streams;
  rp_test_take_streams(&streams);
  in_dir(f, "nostream.pdf", path, sizeof path);
  rp_status st = rp_figure_write(path, &d.fig, &e);
  rp_test_give_back_streams(&streams);
  assert_int_equal(st, RP_EPLOT);
  assert_non_null(strstr(e.msg, "stream"));
  assert_int_equal(rp_test_count_entries(f->dir), 0);
  assert_int_equal(rp_figure_write(path, &d.fig, &e), RP_OK); /* and again afterwards */
}

/* ------------------------------------------------------- ticks and ranges */

/* One label style per axis: either every non-zero label is a power of ten or none is. */
static void assert_one_style(const rp_figure_ticks *t) {
  for (size_t i = 0; i < t->n; i++) {
    if (strcmp(t->label[i], "0") == 0) continue;
    int pow10 = strstr(t->label[i], "10#u") != NULL;
    assert_int_equal(pow10, t->powers);
  }
}

static void test_ticks_keep_one_label_style_per_axis(void **state) {
  (void)state;
  rp_figure_ticks t;
  /* log 1 .. 10^6: decades, all as powers ("10000" next to "10^5" was the old defect) */
  assert_int_equal(rp_figure_axis_ticks(1.0, 1e6, 1, 8, &t, NULL), RP_OK);
  assert_int_equal(t.n, 7);
  assert_true(t.powers);
  assert_string_equal(t.label[0], "10#u0#d");
  assert_string_equal(t.label[6], "10#u6#d");
  assert_one_style(&t);
  /* log 0.01 .. 1000: plain numbers for every tick */
  assert_int_equal(rp_figure_axis_ticks(0.01, 1000.0, 1, 8, &t, NULL), RP_OK);
  assert_false(t.powers);
  assert_string_equal(t.label[0], "0.01");
  assert_string_equal(t.label[t.n - 1], "1000");
  assert_one_style(&t);
  /* linear 0 .. 2.5e5: one exponent for all, 0 plain */
  assert_int_equal(rp_figure_axis_ticks(0.0, 2.5e5, 0, 6, &t, NULL), RP_OK);
  assert_true(t.powers);
  assert_string_equal(t.label[0], "0");
  assert_string_equal(t.label[1], "0.5×10#u5#d");
  assert_one_style(&t);
  /* linear -1 .. 1 with step 0.5: same decimals on every label */
  assert_int_equal(rp_figure_axis_ticks(-1.0, 1.0, 0, 5, &t, NULL), RP_OK);
  assert_int_equal(t.n, 5);
  assert_string_equal(t.label[0], "-1.0");
  assert_string_equal(t.label[2], "0.0");
  assert_string_equal(t.label[4], "1.0");
  /* at most max_ticks, inside the range, increasing, for many ranges */
  const double lo[] = {0.8, 1.1, 0.003, 2e-7, 5.0, -40.0, 1e3};
  const double hi[] = {3.0, 1.9, 7e4, 9e-7, 5e8, 75.0, 1.2e3};
  for (int is_log = 0; is_log < 2; is_log++)
    for (size_t k = 0; k < sizeof lo / sizeof lo[0]; k++) {
      if (is_log && lo[k] <= 0.0) continue;
      for (int m = 3; m <= 10; m++) {
        assert_int_equal(rp_figure_axis_ticks(lo[k], hi[k], is_log, m, &t, NULL), RP_OK);
        assert_true(t.n >= 2);
        assert_true(t.n <= (size_t)m);
        for (size_t i = 0; i < t.n; i++) {
          /* inside the range up to rounding: 1e-9 relative */
          assert_true(t.value[i] >= lo[k] - 1e-9 * fabs(lo[k]));
          assert_true(t.value[i] <= hi[k] + 1e-9 * fabs(hi[k]));
          if (i > 0) assert_true(t.value[i] > t.value[i - 1]);
        }
        assert_one_style(&t);
      }
    }
}

static void test_log_axis_of_less_than_a_decade_gets_finer_ticks(void **state) {
  (void)state;
  /* data 0.8–3 mm: the axis stays near the data (never 1–10) with ticks inside */
  double a, b;
  assert_int_equal(rp_figure_axis_range(0.8, 3.0, 1, &a, &b, NULL), RP_OK);
  /* 4 % of the log span on each side: 0.8 / (3/0.8)^0.04, 3 * (3/0.8)^0.04 (exact
   * arithmetic of the rule) */
  assert_close(a, 0.8 / pow(3.0 / 0.8, 0.04), 1e-12, 0.0);
  assert_close(b, 3.0 * pow(3.0 / 0.8, 0.04), 1e-12, 0.0);
  rp_figure_ticks t;
  assert_int_equal(rp_figure_axis_ticks(a, b, 1, 8, &t, NULL), RP_OK);
  assert_true(t.n >= 3);
  assert_true(t.value[0] >= a && t.value[t.n - 1] <= b);
  assert_false(t.powers);
  /* 1.1–1.9: no integer mantissa fits three times; linear steps */
  assert_int_equal(rp_figure_axis_ticks(1.1, 1.9, 1, 6, &t, NULL), RP_OK);
  assert_true(t.n >= 3);
  assert_string_equal(t.label[0], "1.2");
  /* 0.8–30 (1.6 decades): 1-2-5 ticks */
  assert_int_equal(rp_figure_axis_ticks(0.8, 30.0, 1, 8, &t, NULL), RP_OK);
  assert_int_equal(t.n, 5);
  assert_close(t.value[1], 2.0, 1e-12, 0.0);
  assert_close(t.value[4], 20.0, 1e-12, 0.0);
}

static void test_axis_range_follows_the_data(void **state) {
  (void)state;
  double a, b;
  rp_error e = {0};
  assert_int_equal(rp_figure_axis_range(2.0, 12.0, 0, &a, &b, &e), RP_OK);
  assert_close(a, 1.6, 1e-12, 0.0); /* 4 % of 10 */
  assert_close(b, 12.4, 1e-12, 0.0);
  assert_int_equal(rp_figure_axis_range(5.0, 5.0, 0, &a, &b, &e), RP_OK); /* ±10 % then pad */
  assert_close(a, 4.5 - 0.04, 1e-12, 0.0);
  assert_close(b, 5.5 + 0.04, 1e-12, 0.0);
  assert_int_equal(rp_figure_axis_range(0.0, 0.0, 0, &a, &b, &e), RP_OK);
  assert_close(a, -1.08, 1e-12, 0.0);
  assert_int_equal(rp_figure_axis_range(2.0, 2.0, 1, &a, &b, &e), RP_OK); /* ±0.1 decade */
  assert_close(log10(a), log10(2.0) - 0.108, 1e-12, 1e-12);
  assert_int_equal(rp_figure_axis_range(NAN, NAN, 1, &a, &b, &e), RP_OK);
  assert_close(a, 1.0, 0.0, 0.0);
  assert_close(b, 10.0, 0.0, 0.0);
  assert_int_equal(rp_figure_axis_range(NAN, NAN, 0, &a, &b, &e), RP_OK);
  assert_close(b, 1.0, 0.0, 0.0);
  /* statuses */
  assert_int_equal(rp_figure_axis_range(1.0, INFINITY, 0, &a, &b, &e), RP_EINVAL);
  assert_int_equal(rp_figure_axis_range(3.0, 1.0, 0, &a, &b, &e), RP_EINVAL);
  assert_int_equal(rp_figure_axis_range(0.0, 1.0, 1, &a, &b, &e), RP_EINVAL);
  assert_non_null(strstr(e.msg, "log"));
  assert_int_equal(rp_figure_axis_range(0.0, 1.0, 0, NULL, &b, &e), RP_EINVAL);
  rp_figure_ticks t;
  assert_int_equal(rp_figure_axis_ticks(1.0, 1.0, 0, 5, &t, &e), RP_EINVAL);
  assert_int_equal(rp_figure_axis_ticks(NAN, 1.0, 0, 5, &t, &e), RP_EINVAL);
  assert_int_equal(rp_figure_axis_ticks(-1.0, 1.0, 1, 5, &t, &e), RP_EINVAL);
  assert_int_equal(rp_figure_axis_ticks(0.0, 1.0, 0, 1, &t, &e), RP_EINVAL);
  assert_non_null(strstr(e.msg, "max_ticks"));
  assert_int_equal(rp_figure_axis_ticks(0.0, 1.0, 0, 17, &t, &e), RP_EINVAL);
  assert_int_equal(rp_figure_axis_ticks(0.0, 1.0, 0, 5, NULL, &e), RP_EINVAL);
}

/* ------------------------------------------------------------- colour maps */

/* sRGB (8 bit) -> CIE L*a*b* (D65): IEC 61966-2-1 decoding and matrix, CIE 15:2004
 * formulas, written independently of the library's inverse. */
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

static void test_colormaps_monotone_viridis_and_symmetric_diverging(void **state) {
  (void)state;
  double lab[256][3], dlab[256][3];
  for (int k = 0; k < 256; k++) {
    unsigned char a[3], b[3];
    assert_int_equal(rp_figure_colormap_rgb(RP_FIGURE_CMAP_VIRIDIS, k / 255.0, a, NULL), RP_OK);
    assert_int_equal(rp_plot_colormap_rgb(RP_PLOT_CMAP_SEQUENTIAL, k / 255.0, b, NULL), RP_OK);
    assert_memory_equal(a, b, 3); /* both APIs use one table */
    srgb_to_lab(a, lab[k]);
    assert_int_equal(rp_figure_colormap_rgb(RP_FIGURE_CMAP_DIVERGING, k / 255.0, a, NULL), RP_OK);
    srgb_to_lab(a, dlab[k]);
  }
  /* viridis lightness rises (design goal, van der Walt & Smith 2015, from memory); 8-bit
   * rounding can undo one ~0.3 L* step, so pairs two entries apart are compared */
  for (int k = 0; k + 2 < 256; k++) assert_true(lab[k + 2][0] > lab[k][0]);
  /* diverging: symmetric lightness L*(k) = L*(255-k) within 0.5 (8-bit rounding), equal
   * CIE76 ΔE (CIE 15:2004) from each end to the centre entry on its side within 2 % (arm
   * lengths 72.8 and 73.0 ΔE from the anchors, less half an entry, plus rounding) */
  for (int k = 0; k < 128; k++) assert_close(dlab[k][0], dlab[255 - k][0], 0.0, 0.5);
  double arm[2];
  for (int s = 0; s < 2; s++) {
    const double *p = s == 0 ? dlab[0] : dlab[255], *q = s == 0 ? dlab[128] : dlab[127];
    arm[s] = sqrt((p[0] - q[0]) * (p[0] - q[0]) + (p[1] - q[1]) * (p[1] - q[1]) +
                  (p[2] - q[2]) * (p[2] - q[2]));
  }
  assert_close(arm[0], arm[1], 0.02, 0.0);
  rp_error e = {0};
  unsigned char rgb[3];
  assert_int_equal(rp_figure_colormap_rgb(2, 0.5, rgb, &e), RP_EINVAL);
  assert_int_equal(rp_figure_colormap_rgb(0, -0.1, rgb, &e), RP_EINVAL);
  assert_int_equal(rp_figure_colormap_rgb(0, 0.5, NULL, &e), RP_EINVAL);
}

int main(void) {
  rp_test_init();
  const struct CMUnitTest tests[] = {
      cmocka_unit_test_setup_teardown(test_every_panel_kind_writes_complete_png_svg_pdf, setup, teardown),
      cmocka_unit_test_setup_teardown(test_nan_points_are_not_drawn, setup, teardown),
      cmocka_unit_test_setup_teardown(test_full_disk_is_eio_with_reason_and_leaves_nothing, setup, teardown),
      cmocka_unit_test_setup_teardown(test_percent_in_name_is_literal, setup, teardown),
      cmocka_unit_test_setup_teardown(test_symlink_is_written_through_and_mode_kept, setup, teardown),
      cmocka_unit_test_setup_teardown(test_draw_temp_then_commit_or_discard, setup, teardown),
      cmocka_unit_test_setup_teardown(test_check_file_finds_truncated_pictures, setup, teardown),
      cmocka_unit_test_setup_teardown(test_bad_figures_are_einval_and_leave_nothing, setup, teardown),
      cmocka_unit_test_setup_teardown(test_missing_folder_is_eio_and_leaves_nothing, setup, teardown),
      cmocka_unit_test_setup_teardown(test_no_free_plplot_stream_is_eplot, setup, teardown),
      cmocka_unit_test(test_ticks_keep_one_label_style_per_axis),
      cmocka_unit_test(test_log_axis_of_less_than_a_decade_gets_finer_ticks),
      cmocka_unit_test(test_axis_range_follows_the_data),
      cmocka_unit_test(test_colormaps_monotone_viridis_and_symmetric_diverging),
  };
  return cmocka_run_group_tests_name("figure", tests, NULL, NULL);
}
