/* test_iq_file.c — the netCDF-4 I/Q writer: a round trip read back with netCDF-C
 * itself, the attributes that make a file self-describing, whole-or-nothing writing,
 * and every error status. */
#include "rp_test.h"

#include <complex.h>
#include <dirent.h>
#include <netcdf.h>
#include <string.h>
#include <sys/stat.h>

#include "rainprint/iq_file.h"
#include "rainprint/pulse_estimators.h"

static rp_iq_params base_params(void) {
  rp_iq_params p = {35.0, 1.5, 0.97, 40.0, 4.0, 2.0, 20.0, 16, 1e-3, 53.0};
  return p;
}

static void out_path(const char *name, char *buf, size_t n) {
  const char *dir = getenv("RP_BINARY_DIR");
  char d[2048];
  snprintf(d, sizeof d, "%s/test_iq_file_out", dir ? dir : ".");
  mkdir(d, 0777);
  snprintf(buf, n, "%s/%s", d, name);
}

static double att_double(int nc, const char *name) {
  double x = NAN;
  assert_int_equal(nc_get_att_double(nc, NC_GLOBAL, name, &x), NC_NOERR);
  return x;
}

static void att_text(int nc, int var, const char *name, char *buf, size_t n) {
  size_t len = 0;
  assert_int_equal(nc_inq_attlen(nc, var, name, &len), NC_NOERR);
  assert_true(len < n);
  assert_int_equal(nc_get_att_text(nc, var, name, buf), NC_NOERR);
  buf[len] = '\0';
}

static int count_temp_files(void) {
  char path[4096];
  out_path("", path, sizeof path);
  DIR *d = opendir(path);
  int n = 0;
  struct dirent *e;
  while (d && (e = readdir(d)) != NULL) n += strstr(e->d_name, ".tmp") != NULL;
  if (d) closedir(d);
  return n;
}

static void test_round_trip_samples_and_attributes(void **state) {
  (void)state;
  rp_iq_params p = base_params();
  const size_t nr = 3, m = p.n_pulses;
  double complex h[3 * 16], v[3 * 16];
  rp_pulse_summary s[RP_PULSE_N_KEYS];
  rp_pulse_ensemble_out o = {0};
  o.h = h;
  o.v = v;
  rp_error err = {0};
  assert_int_equal(rp_pulse_ensemble(&p, NULL, RP_WINDOW_HANN, nr, 1234, s, &o, &err), RP_OK);
  char path[4096];
  out_path("gate_iq.nc", path, sizeof path);
  assert_int_equal(rp_iq_save(path, &p, NULL, 1234, nr, h, v, NULL, &err), RP_OK);
  assert_int_equal(count_temp_files(), 0);

  int nc;
  assert_int_equal(nc_open(path, NC_NOWRITE, &nc), NC_NOERR);
  int format;
  assert_int_equal(nc_inq_format(nc, &format), NC_NOERR);
  assert_int_equal(format, NC_FORMAT_NETCDF4);
  int dr, dp;
  size_t lr, lp;
  assert_int_equal(nc_inq_dimid(nc, "realisation", &dr), NC_NOERR);
  assert_int_equal(nc_inq_dimid(nc, "pulse", &dp), NC_NOERR);
  nc_inq_dimlen(nc, dr, &lr);
  nc_inq_dimlen(nc, dp, &lp);
  assert_int_equal(lr, nr);
  assert_int_equal(lp, m);
  const char *names[4] = {"h_re", "h_im", "v_re", "v_im"};
  double buf[3 * 16];
  for (int i = 0; i < 4; i++) {
    int var;
    assert_int_equal(nc_inq_varid(nc, names[i], &var), NC_NOERR);
    assert_int_equal(nc_get_var_double(nc, var, buf), NC_NOERR);
    const double complex *src = i < 2 ? h : v;
    for (size_t k = 0; k < nr * m; k++) {
      const double want = (i % 2 == 0) ? creal(src[k]) : cimag(src[k]);
      assert_true(buf[k] == want);  /* doubles stored exactly */
    }
    char units[16];
    att_text(nc, var, "units", units, sizeof units);
    assert_string_equal(units, "1");
  }
  int vt;
  assert_int_equal(nc_inq_varid(nc, "time", &vt), NC_NOERR);
  assert_int_equal(nc_get_var_double(nc, vt, buf), NC_NOERR);
  for (size_t k = 0; k < m; k++) assert_close(buf[k], (double)k * p.prt_s, 1e-15, 0);
  /* inputs as global attributes */
  assert_close(att_double(nc, "snr_db"), p.snr_db, 0, 0);
  assert_close(att_double(nc, "zdr_db"), p.zdr_db, 0, 0);
  assert_close(att_double(nc, "rhohv"), p.rhohv, 0, 0);
  assert_close(att_double(nc, "phidp_deg"), p.phidp_deg, 0, 0);
  assert_close(att_double(nc, "velocity_m_s"), p.velocity_m_s, 0, 0);
  assert_close(att_double(nc, "width_m_s"), p.width_m_s, 0, 0);
  assert_close(att_double(nc, "prt_s"), p.prt_s, 0, 0);
  assert_close(att_double(nc, "wavelength_mm"), p.wavelength_mm, 0, 0);
  assert_close(att_double(nc, "noise_power"), 1.0, 0, 0);
  assert_close(att_double(nc, "nyquist_velocity_m_s"), 0.053 / 4e-3, 1e-14, 0);
  /* c / lambda: 299.792458 mm GHz / 53 mm (SI definition of c) */
  assert_close(att_double(nc, "frequency_ghz"), 299.792458 / 53.0, 1e-14, 0);
  unsigned long long seed = 0, np = 0;
  assert_int_equal(nc_get_att_ulonglong(nc, NC_GLOBAL, "seed", &seed), NC_NOERR);
  assert_int_equal(nc_get_att_ulonglong(nc, NC_GLOBAL, "n_pulses", &np), NC_NOERR);
  assert_int_equal(seed, 1234);
  assert_int_equal(np, m);
  char text[1024];
  att_text(nc, NC_GLOBAL, "Conventions", text, sizeof text);
  assert_string_equal(text, "CF-1.8");
  att_text(nc, NC_GLOBAL, "comment", text, sizeof text);
  assert_non_null(strstr(text, "local rain gauges"));
  att_text(nc, NC_GLOBAL, "sign_conventions", text, sizeof text);
  assert_non_null(strstr(text, "arg <H V*>"));
  att_text(nc, NC_GLOBAL, "spectrum_model", text, sizeof text);
  assert_string_equal(text, "gaussian");
  nc_close(nc);
}

static void test_mixture_spectrum_is_stored(void **state) {
  (void)state;
  rp_iq_params p = base_params();
  double w[2] = {1, 0.5}, mu[2] = {-3, 5}, sd[2] = {1, 0.7};
  rp_iq_spectrum spec = {2, w, mu, sd};
  double complex h[16], v[16];
  rp_error err = {0};
  rp_iq_workspace *ws = rp_iq_workspace_alloc(16, &err);
  rp_rng rng;
  rp_rng_init(&rng, 5, rp_rng_key(RP_RNG_PULSES, 0, 0, 0));
  assert_int_equal(rp_iq_synthesize(ws, &p, &spec, &rng, h, v, &err), RP_OK);
  rp_iq_workspace_free(ws);
  char path[4096];
  out_path("mixture_iq.nc", path, sizeof path);
  assert_int_equal(rp_iq_save(path, &p, &spec, 5, 1, h, v, "one stream", &err), RP_OK);
  int nc, var;
  assert_int_equal(nc_open(path, NC_NOWRITE, &nc), NC_NOERR);
  double buf[2];
  assert_int_equal(nc_inq_varid(nc, "spectrum_mean_velocity", &var), NC_NOERR);
  assert_int_equal(nc_get_var_double(nc, var, buf), NC_NOERR);
  assert_true(buf[0] == -3 && buf[1] == 5);
  double x;
  assert_int_not_equal(nc_get_att_double(nc, NC_GLOBAL, "velocity_m_s", &x), NC_NOERR);
  char text[256];
  att_text(nc, NC_GLOBAL, "random_streams", text, sizeof text);
  assert_string_equal(text, "one stream");
  nc_close(nc);
}

static void test_errors_leave_no_file(void **state) {
  (void)state;
  rp_iq_params p = base_params();
  double complex h[16] = {0}, v[16] = {0};
  rp_error err = {0};
  assert_int_equal(rp_iq_save("/nonexistent-folder-rp/x.nc", &p, NULL, 1, 1, h, v, NULL, &err),
                   RP_EIO);
  assert_int_equal(rp_iq_save(NULL, &p, NULL, 1, 1, h, v, NULL, &err), RP_EINVAL);
  char path[4096];
  out_path("bad_iq.nc", path, sizeof path);
  remove(path);
  assert_int_equal(rp_iq_save(path, &p, NULL, 1, 0, h, v, NULL, &err), RP_EINVAL);
  assert_int_equal(rp_iq_save(path, &p, NULL, 1, 1, NULL, v, NULL, &err), RP_EINVAL);
  p.rhohv = 1.5;
  assert_int_equal(rp_iq_save(path, &p, NULL, 1, 1, h, v, NULL, &err), RP_EINVAL);
  assert_non_null(strstr(err.msg, "rhoHV"));
  struct stat st;
  assert_int_not_equal(stat(path, &st), 0);
  assert_int_equal(count_temp_files(), 0);
}

int main(void) {
  rp_test_init();
  const struct CMUnitTest tests[] = {
      cmocka_unit_test(test_round_trip_samples_and_attributes),
      cmocka_unit_test(test_mixture_spectrum_is_stored),
      cmocka_unit_test(test_errors_leave_no_file),
  };
  return cmocka_run_group_tests(tests, NULL, NULL);
}
