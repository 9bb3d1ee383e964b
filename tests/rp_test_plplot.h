/* rp_test_plplot.h — test helpers for the picture tests (test_plot, test_figure): take
 * every free PLplot stream (PLplot allows PL_NSTREAMS = 100, plstrm.h) so that no figure
 * can be opened, and give them back afterwards. */
#ifndef RP_TEST_PLPLOT_H
#define RP_TEST_PLPLOT_H

#include <plplot.h>

#define RP_TEST_MAX_STREAMS 128

typedef struct {
  PLINT old, made[RP_TEST_MAX_STREAMS];
  int n;
} rp_test_streams;

/* Take every free stream, keeping the current one current. */
static inline void rp_test_take_streams(rp_test_streams *s) {
  s->n = 0;
  plgstrm(&s->old);
  for (;;) {
    PLINT k = -1;
    plmkstrm(&k);
    if (k < 0 || s->n == RP_TEST_MAX_STREAMS) break;
    s->made[s->n++] = k;
  }
  plsstrm(s->old);
}

/* End the streams taken by rp_test_take_streams and make the old one current again. */
static inline void rp_test_give_back_streams(rp_test_streams *s) {
  for (int i = 0; i < s->n; i++) {
    plsstrm(s->made[i]);
    plend1();
  }
  plsstrm(s->old);
}

#endif
