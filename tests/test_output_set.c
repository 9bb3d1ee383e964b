/* test_output_set.c — outputs replaced together or not at all, the output-path check,
 * symlinks, modes and temporary names. */
#include "rp_test.h"

#include <dirent.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "io/tempfile.h"
#include "rainprint/output_set.h"

static char dir[256];

static int setup(void **state) {
  (void)state;
  snprintf(dir, sizeof dir, "%s/test_output_set_tmp",
           getenv("RP_BINARY_DIR") ? getenv("RP_BINARY_DIR") : ".");
  char cmd[1024];
  snprintf(cmd, sizeof cmd, "rm -rf '%s' && mkdir -p '%s'", dir, dir);
  return system(cmd);
}

static const char *at(const char *name, char *buf, size_t n) {
  snprintf(buf, n, "%s/%s", dir, name);
  return buf;
}

static void put(const char *path, const char *text) {
  FILE *f = fopen(path, "w");
  assert_non_null(f);
  fputs(text, f);
  fclose(f);
}

static void expect_text(const char *path, const char *text) {
  char buf[256] = {0};
  FILE *f = fopen(path, "r");
  assert_non_null(f);
  size_t n = fread(buf, 1, sizeof buf - 1, f);
  fclose(f);
  buf[n] = '\0';
  assert_string_equal(buf, text);
}

static size_t count_temps(void) {
  DIR *d = opendir(dir);
  assert_non_null(d);
  size_t n = 0;
  struct dirent *e;
  while ((e = readdir(d)) != NULL)
    if (strncmp(e->d_name, RP_TEMPFILE_PREFIX, strlen(RP_TEMPFILE_PREFIX)) == 0) n++;
  closedir(d);
  return n;
}

/* The CSV/picture pair: a failure between the two writes leaves the old pair. */
static void test_failure_between_writes_keeps_the_old_pair(void **state) {
  (void)state;
  char csv[512], png[512];
  put(at("pair.csv", csv, sizeof csv), "old csv");
  put(at("pair.png", png, sizeof png), "old png");
  rp_error err = {0};
  rp_output_set *s = rp_output_set_alloc();
  const char *tcsv = NULL, *tpng = NULL;
  assert_int_equal(rp_output_set_add(s, "--plot", png, &tpng, &err), RP_OK);
  assert_int_equal(rp_output_set_add(s, "--csv", csv, &tcsv, &err), RP_OK);
  assert_int_equal(rp_output_set_count(s), 2);
  put(tcsv, "new csv"); /* the first write succeeds, the picture "fails": no commit */
  rp_output_set_free(s);
  expect_text(csv, "old csv");
  expect_text(png, "old png");
  assert_int_equal(count_temps(), 0);
  /* both written: both replaced */
  s = rp_output_set_alloc();
  assert_int_equal(rp_output_set_add(s, "--plot", png, &tpng, &err), RP_OK);
  assert_int_equal(rp_output_set_add(s, "--csv", csv, &tcsv, &err), RP_OK);
  put(tpng, "new png");
  put(tcsv, "new csv");
  assert_int_equal(rp_output_set_commit(s, &err), RP_OK);
  assert_int_equal(rp_output_set_commit(s, &err), RP_EINVAL); /* once */
  rp_output_set_free(s);
  expect_text(csv, "new csv");
  expect_text(png, "new png");
  assert_int_equal(count_temps(), 0);
}

/* A commit that cannot rename (the target became a directory meanwhile) reports which
 * outputs were replaced and leaves no temporary file after free. */
static void test_commit_failure_names_the_output(void **state) {
  (void)state;
  char a[512], b[512];
  at("first.txt", a, sizeof a);
  at("second.txt", b, sizeof b);
  rp_error err = {0};
  rp_output_set *s = rp_output_set_alloc();
  const char *ta, *tb;
  assert_int_equal(rp_output_set_add(s, "first", a, &ta, &err), RP_OK);
  assert_int_equal(rp_output_set_add(s, "second", b, &tb, &err), RP_OK);
  put(ta, "a");
  put(tb, "b");
  assert_int_equal(mkdir(b, 0777), 0);
  put(at("second.txt/x", a, sizeof a), "keeps the directory non-empty");
  at("first.txt", a, sizeof a);
  assert_int_equal(rp_output_set_commit(s, &err), RP_EIO);
  assert_non_null(strstr(err.msg, "second"));
  assert_non_null(strstr(err.msg, "1 of 2"));
  rp_output_set_free(s);
  expect_text(a, "a");
  assert_int_equal(count_temps(), 0);
}

static void test_output_check_refuses_before_any_work(void **state) {
  (void)state;
  char p[512];
  rp_error err = {0};
  assert_int_equal(rp_output_check("--csv", at("fine.csv", p, sizeof p), &err), RP_OK);
  assert_int_not_equal(access(p, F_OK), 0); /* nothing left behind */
  assert_int_equal(count_temps(), 0);
  assert_int_equal(rp_output_check("--csv", dir, &err), RP_EINVAL);
  assert_non_null(strstr(err.msg, "directory"));
  assert_int_equal(rp_output_check("--csv", at("no-such-dir/x.csv", p, sizeof p), &err), RP_EIO);
  assert_non_null(strstr(err.msg, "No such file or directory"));
  assert_int_equal(rp_output_check("--csv", at(".rp-tmp-1-0-x.csv", p, sizeof p), &err),
                   RP_EINVAL);
  assert_non_null(strstr(err.msg, "temporary"));
  assert_int_equal(rp_output_check("--csv", "", &err), RP_EINVAL);
  assert_int_equal(rp_output_check("--csv", NULL, &err), RP_EINVAL);
  at("fifo", p, sizeof p);
  assert_int_equal(mkfifo(p, 0600), 0);
  assert_int_equal(rp_output_check("--csv", p, &err), RP_EINVAL);
}

/* Temporary names never stack, never hold '%' from the output's name, and stale ones
 * of a dead process are removed by the next run. */
static void test_temporary_names_are_flat_and_cleaned(void **state) {
  (void)state;
  char p[512], tmp[1024];
  rp_error err = {0};
  int fd = -1;
  assert_int_equal(rp_tempfile_create("picture", at("plot%d.png", p, sizeof p), tmp,
                                      sizeof tmp, &fd, &err), RP_OK);
  close(fd);
  assert_null(strchr(tmp + strlen(dir), '%'));
  assert_true(rp_tempfile_is_temp_name(tmp));
  int fd2 = -1;
  char tmp2[1024];
  assert_int_equal(rp_tempfile_create("picture", tmp, tmp2, sizeof tmp2, &fd2, &err), RP_EINVAL);
  unlink(tmp);
  /* pid 2^22 + 1 is above Linux's pid_max default range for a live process here */
  char stale[512];
  snprintf(stale, sizeof stale, "%s/%s4194305-0-out.csv", dir, RP_TEMPFILE_PREFIX);
  put(stale, "left by a kill");
  snprintf(tmp2, sizeof tmp2, "%s/%s4194305-0-other.csv", dir, RP_TEMPFILE_PREFIX);
  put(tmp2, "another output's");
  rp_output_set *s = rp_output_set_alloc();
  const char *t;
  assert_int_equal(rp_output_set_add(s, "--csv", at("out.csv", p, sizeof p), &t, &err), RP_OK);
  assert_int_not_equal(access(stale, F_OK), 0);
  assert_int_equal(access(tmp2, F_OK), 0);
  assert_int_equal(rp_output_set_add(s, "--csv again", p, &t, &err), RP_EINVAL); /* twice */
  rp_output_set_free(s);
  unlink(tmp2);
  assert_int_equal(rp_output_set_add(NULL, "x", p, &t, &err), RP_EINVAL);
  rp_output_set_free(NULL);
}

/* Writing through a symlink replaces the target and keeps the link; an existing file's
 * mode is kept. */
static void test_symlink_written_through_and_mode_kept(void **state) {
  (void)state;
  char target[512], link[512];
  at("real.csv", target, sizeof target);
  put(target, "old");
  assert_int_equal(chmod(target, 0640), 0);
  at("link.csv", link, sizeof link);
  assert_int_equal(symlink("real.csv", link), 0); /* relative, as users make them */
  rp_error err = {0};
  rp_output_set *s = rp_output_set_alloc();
  const char *t;
  assert_int_equal(rp_output_set_add(s, "--csv", link, &t, &err), RP_OK);
  put(t, "new");
  assert_int_equal(rp_output_set_commit(s, &err), RP_OK);
  rp_output_set_free(s);
  struct stat st;
  assert_int_equal(lstat(link, &st), 0);
  assert_true(S_ISLNK(st.st_mode));
  expect_text(target, "new");
  assert_int_equal(stat(target, &st), 0);
  assert_int_equal(st.st_mode & 07777, 0640);
  char resolved[512];
  assert_int_equal(rp_tempfile_resolve(link, resolved, sizeof resolved, &err), RP_OK);
  assert_string_equal(resolved, target);
  /* a loop is an error, not a hang */
  char l1[512], l2[512];
  at("loop1", l1, sizeof l1);
  at("loop2", l2, sizeof l2);
  assert_int_equal(symlink("loop2", l1), 0);
  assert_int_equal(symlink("loop1", l2), 0);
  assert_int_equal(rp_tempfile_resolve(l1, resolved, sizeof resolved, &err), RP_EINVAL);
}

/* A missing folder or a file in the folder's place is named in the message (not the
 * temporary file the check would have made there). */
static void test_output_check_names_a_missing_folder(void **state) {
  (void)state;
  rp_error e = {0};
  assert_int_equal(rp_output_check("--out", "/nonexistent-rp-folder/x.png", &e), RP_EIO);
  assert_non_null(strstr(e.msg, "the folder '/nonexistent-rp-folder' does not exist"));
  assert_null(strstr(e.msg, ".rp-tmp-"));
  assert_int_equal(rp_output_check("--out", "/etc/passwd/x.nc", &e), RP_EIO);
  assert_non_null(strstr(e.msg, "is not a folder"));
}

int main(void) {
  rp_test_init();
  const struct CMUnitTest tests[] = {
      cmocka_unit_test(test_output_check_names_a_missing_folder),
      cmocka_unit_test(test_failure_between_writes_keeps_the_old_pair),
      cmocka_unit_test(test_commit_failure_names_the_output),
      cmocka_unit_test(test_output_check_refuses_before_any_work),
      cmocka_unit_test(test_temporary_names_are_flat_and_cleaned),
      cmocka_unit_test(test_symlink_written_through_and_mode_kept),
  };
  return cmocka_run_group_tests_name("output_set", tests, setup, NULL);
}
