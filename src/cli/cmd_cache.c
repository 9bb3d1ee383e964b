/* cmd_cache.c — `rainprint cache list|clear`: the table cache (table_file.h). */
#include <string.h>
#include <time.h>

#include "cli/cli.h"
#include "rainprint/names.h"
#include "rainprint/table_file.h"

static const rp_opts_spec cache_opts[] = {
    RP_OPTS_FLAG_ROW("json", "machine-readable output (JSON on stdout)"), RP_OPTS_END};

static const rp_opts_command cache_cmd = {
    .cmd = "cache",
    .usage = "cache list|clear [--json]",
    .about = "The cache of computed scattering tables ($RAINPRINT_CACHE, else\n"
             "$XDG_CACHE_HOME/rainprint, else ~/.cache/rainprint): list shows each table\n"
             "(most recently used first) with its size and configuration; clear removes\n"
             "them (and nothing else in the folder). Tables are computed again when needed.",
    .examples = "  rainprint cache list\n  rainprint cache clear",
    .tables = {cache_opts},
    .titles = {"Options"},
    .max_positional = 1,
    .positional = "list|clear",
};

static int list(const char *dir, int json) {
  rp_table_cache_entry *e = NULL;
  size_t n = 0;
  rp_error err = {0};
  if (rp_table_cache_list(dir, &e, &n, &err) != RP_OK) return rp_cli_fail_err("cache", &err);
  uint64_t total = 0;
  for (size_t i = 0; i < n; i++) total += e[i].size_bytes;
  if (json) {
    json_t *arr = json_array();
    for (size_t i = 0; i < n; i++)
      json_array_append_new(arr, json_pack("{s:o, s:I, s:I, s:o}", "name",
                                           rp_json_text(e[i].name), "size_bytes",
                                           (json_int_t)e[i].size_bytes, "last_use",
                                           (json_int_t)e[i].last_use, "summary",
                                           rp_json_text(e[i].summary)));
    rp_table_cache_list_free(e);
    return rp_json_print(json_pack("{s:o, s:I, s:o}", "folder", rp_json_text(dir), "total_bytes",
                                   (json_int_t)total, "tables", arr));
  }
  printf("Table cache %s: %zu table%s, %.1f MB\n", dir, n, n == 1 ? "" : "s",
         (double)total / 1e6);
  for (size_t i = 0; i < n; i++) {
    char when[32];
    struct tm tm;
    localtime_r(&e[i].last_use, &tm);
    strftime(when, sizeof when, "%Y-%m-%d %H:%M", &tm);
    printf("  %8.1f kB  used %s  %s\n", (double)e[i].size_bytes / 1e3, when, e[i].summary);
  }
  rp_table_cache_list_free(e);
  return RP_EXIT_OK;
}

int rp_cmd_cache(int argc, char **argv) {
  rp_opts o;
  int rc = rp_opts_parse(&cache_cmd, argc, argv, &o);
  if (rc != RP_OPTS_GO_ON) return rc;
  if (o.n_pos == 0)
    return rp_cli_fail("cache", RP_EINVAL, "say what to do: rainprint cache list or rainprint "
                       "cache clear");
  const char *dir = rp_cli_cache_dir();
  if (dir == NULL)
    return rp_cli_fail("cache", RP_EINVAL, "no cache folder: set RAINPRINT_CACHE (or HOME)");
  const int json = rp_opts_given(&o, "json");
  if (strcmp(o.pos[0], "list") == 0) return list(dir, json);
  if (strcmp(o.pos[0], "clear") == 0) {
    size_t removed = 0;
    rp_error err = {0};
    if (rp_table_cache_clear(dir, &removed, &err) != RP_OK) return rp_cli_fail_err("cache", &err);
    if (json)
      return rp_json_print(json_pack("{s:o, s:I}", "folder", rp_json_text(dir), "removed",
                                     (json_int_t)removed));
    printf("Removed %zu file%s from %s\n", removed, removed == 1 ? "" : "s", dir);
    return RP_EXIT_OK;
  }
  static const char *const actions[] = {"list", "clear"};
  rp_error err = {0};
  int v = 0;
  rp_names_find(actions, 2, NULL, 0, "cache action", o.pos[0], &v, &err);
  return rp_cli_fail("cache", RP_EINVAL, "%s", err.msg);
}
