/* check_profile.c -- the profile-likelihood drivers (profile.h): grid scan, global bracket,
   Brent's maximum and the interval roots.

   The profiles here are closed forms, so every answer is known exactly:
   - reference: for the quadratic l(x) = c - a (x - x0)^2 / 2 the maximum is x0 and the
     level-L interval is x0 -/+ sqrt(chi2_1^-1(L) / a) (its ends solve l = c - chi2_1^-1(L) / 2);
     the chi-square quantile is GSL's, the threshold formula that of Box & Cox 1964,
     J. R. Statist. Soc. B 26, 211-252, section 4;
   - identities: the grid scan's first maximum and its early stop on the caller's status,
     the bracket test at the ends and on ties, an interval open on one side, the cap of a
     search that an absolute tolerance alone cannot end, and its relative tolerance;
   - errors: a profile that does not exist anywhere (-HUGE_VAL) is left unbracketed. */
#include <check.h>
#include <math.h>
#include <stdlib.h>
#include <gsl/gsl_cdf.h>
#include <gsl/gsl_errno.h>
#include "error.h"
#include "profile.h"

typedef struct quad {
  double x0, a, c;
  size_t calls;
  int status;                 /* set to BL_ENOCONV from call STOP_AT on (0: never) */
  size_t stop_at;
} quad;

static double
quad_l (double x, void *arg)
{
  quad *q = arg;
  q->calls++;
  if (q->stop_at && q->calls >= q->stop_at)
    q->status = BL_ENOCONV;
  return q->c - 0.5 * q->a * (x - q->x0) * (x - q->x0);
}

/* A profile that is not a parabola (Brent's parabolic steps do not hit its top at once):
   l(x) = c - a (x - x0)^2 / 2 - (x - x0)^4. */
static double
quartic_l (double x, void *arg)
{
  quad *q = arg;
  const double u = x - q->x0;
  q->calls++;
  return q->c - 0.5 * q->a * u * u - u * u * u * u;
}

static double
nowhere (double x, void *arg)
{
  (void) x; (void) arg;
  return -HUGE_VAL;
}

/* Two local maxima: l(x) = -(x^2 - 1)^2 + b x has them near x = -1 and x = +1, the global one
   (b > 0) near +1, where 4 x^3 - 4 x - b = 0 (its derivative; closed form, common practice,
   no source). */
static double
twin_l (double x, void *arg)
{
  quad *q = arg;
  q->calls++;
  return -(x * x - 1.0) * (x * x - 1.0) + q->a * x;
}

static double
slope_l (double x, void *arg)
{
  quad *q = arg;
  q->calls++;
  return q->a * x;
}

static const bl_profile_tol tight = { 1e-10, 0.0, 200, 1 };
static const bl_profile_tol roots = { 1e-12, 0.0, 200, 0 };

START_TEST (profile_quadratic_maximum_and_interval)
{
  quad q = { 0.3719, 2.385, -41.27, 0, BL_OK, 0 };
  double grid[61], val[61], x, lo, hi;
  const double half = sqrt (gsl_cdf_chisq_Pinv (0.95, 1.0) / q.a);
  const size_t m = bl_profile_grid (quad_l, &q, -3.0, 0.1, 61, grid, val, NULL);
  ck_assert_uint_eq (q.calls, 61);
  ck_assert_uint_eq (m, 34);                   /* grid[34] = 0.4, nearest 0.3719 */
  ck_assert_msg (fabs (grid[m] - 0.4) < 1e-12, "grid[m] = %.17g", grid[m]);
  ck_assert (bl_profile_bracketed (val, 61, m));
  ck_assert_int_eq (bl_profile_refine (quad_l, &q, grid, val, 61, m, &tight, &x), BL_OK);
  ck_assert_msg (fabs (x - q.x0) < 1e-7, "maximum %.17g, want %.17g", x, q.x0);
  ck_assert_msg (fabs (bl_profile_threshold (q.c, 0.95) - (q.c - 1.9207294103470353)) < 1e-9,
                 "threshold %.17g", bl_profile_threshold (q.c, 0.95));
  ck_assert_int_eq (bl_profile_interval (quad_l, &q, grid, val, 61, m, x,
                                         bl_profile_threshold (quad_l (x, &q), 0.95), &roots,
                                         &lo, &hi), BL_OK);
  ck_assert_msg (fabs (lo - (q.x0 - half)) < 1e-7, "lo %.17g, want %.17g", lo, q.x0 - half);
  ck_assert_msg (fabs (hi - (q.x0 + half)) < 1e-7, "hi %.17g, want %.17g", hi, q.x0 + half);
}
END_TEST

START_TEST (profile_grid_stops_on_status)
{
  quad q = { 0.3719, 2.385, -41.27, 0, BL_OK, 5 };
  double grid[20], val[20];
  const size_t m = bl_profile_grid (quad_l, &q, -3.0, 0.1, 20, grid, val, &q.status);
  ck_assert_uint_eq (q.calls, 5);              /* stopped after the point that set it */
  ck_assert_uint_eq (m, 3);                    /* the points before it, rising: the last */
  ck_assert_int_eq (q.status, BL_ENOCONV);
}
END_TEST

START_TEST (profile_bracket_ends_and_ties)
{
  const double rising[4] = { 1.0, 2.0, 3.0, 4.0 };
  const double tie[5] = { 1.0, 3.0, 3.0, 2.0, 0.5 };
  const double peak[5] = { 1.0, 2.5, 3.0, 2.0, 0.5 };
  ck_assert (!bl_profile_bracketed (rising, 4, 3));     /* at the end */
  ck_assert (!bl_profile_bracketed (rising, 4, 0));
  ck_assert (!bl_profile_bracketed (tie, 5, 1));        /* not above both neighbours */
  ck_assert (bl_profile_bracketed (peak, 5, 2));
}
END_TEST

START_TEST (profile_open_interval)
{
  /* the grid ends before the profile falls below the threshold on the right */
  quad q = { 0.9, 2.385, -41.27, 0, BL_OK, 0 };
  double grid[11], val[11], x, lo, hi;
  const size_t m = bl_profile_grid (quad_l, &q, 0.0, 0.1, 11, grid, val, NULL);
  ck_assert_uint_eq (m, 9);
  ck_assert_int_eq (bl_profile_refine (quad_l, &q, grid, val, 11, m, &tight, &x), BL_OK);
  ck_assert_int_eq (bl_profile_interval (quad_l, &q, grid, val, 11, m, x,
                                         bl_profile_threshold (quad_l (x, &q), 0.95), &roots,
                                         &lo, &hi), BL_OK);
  ck_assert (isnan (hi));
  ck_assert (isnan (lo));                      /* the grid never falls 1.92 below either */
}
END_TEST

START_TEST (profile_tolerances_and_cap)
{
  /* at x0 = 2.9 an absolute 1e-14 is below Brent's least step (sqrt(DBL_EPSILON) |x|), so
     the search runs to its cap (one evaluation per iteration); a relative 1e-7 ends it early
     at the same maximum to rounding */
  quad q1 = { 2.9, 2.385, -41.27, 0, BL_OK, 0 }, q2 = q1;
  const bl_profile_tol rel = { 1e-14, 1e-7, 500, 1 }, cap = { 1e-14, 0.0, 500, 0 };
  double x1, x2;
  ck_assert_int_eq (bl_profile_brent (quartic_l, &q1, 2.5, quartic_l (2.5, &q1), 2.8,
                                      quartic_l (2.8, &q1), 3.1, quartic_l (3.1, &q1), &rel,
                                      &x1), BL_OK);
  ck_assert_int_eq (bl_profile_brent (quartic_l, &q2, 2.5, quartic_l (2.5, &q2), 2.8,
                                      quartic_l (2.8, &q2), 3.1, quartic_l (3.1, &q2), &cap,
                                      &x2), BL_OK);
  ck_assert_msg (q1.calls > 3 && q1.calls < 100, "relative: %zu calls", q1.calls);
  ck_assert_msg (q2.calls >= 3 + 500 && q2.calls <= 3 + 501, "cap: %zu calls", q2.calls);
  ck_assert_msg (fabs (x1 - 2.9) < 1e-6 && fabs (x2 - 2.9) < 1e-6, "x %.17g %.17g", x1, x2);
}
END_TEST

START_TEST (profile_nowhere_unbracketed)
{
  double grid[7], val[7], x;
  const size_t m = bl_profile_grid (nowhere, NULL, -1.5, 0.5, 7, grid, val, NULL);
  ck_assert_uint_eq (m, 0);
  ck_assert (!(val[m] > -HUGE_VAL));
  ck_assert_int_eq (bl_profile_refine (nowhere, NULL, grid, val, 7, m, &tight, &x), BL_OK);
  ck_assert (x == grid[0]);
}
END_TEST

START_TEST (profile_search_global_of_two)
{
  /* The scan finds the higher of two peaks wherever a local search would start; the refined
     point is the root of 4 x^3 - 4 x - b near 1 (Newton's method here, from x = 1). */
  quad q = { 0.0, 0.1, 0.0, 0, 0, 0 };
  double grid[64], val[64], r = 1.0;
  bl_profile_max mx;
  const size_t ng = bl_profile_npoints (-3.0, 3.0, 8.0);
  ck_assert_uint_eq (ng, 49);
  ck_assert_int_eq (bl_profile_search (twin_l, &q, -3.0, 3.0, ng, grid, val, NULL, &tight,
                                       &mx), BL_OK);
  for (int it = 0; it < 50; it++)
    r -= (4.0 * r * r * r - 4.0 * r - q.a) / (12.0 * r * r - 4.0);
  ck_assert_int_eq (mx.edge, 0);
  ck_assert_double_eq_tol (mx.x, r, 1e-7);
  ck_assert_double_eq_tol (mx.fx, twin_l (r, &q), 1e-12);
  /* with the sign of b turned the global maximum is the other peak, near -1 */
  q.a = -0.1;
  ck_assert_int_eq (bl_profile_search (twin_l, &q, -3.0, 3.0, ng, grid, val, NULL, &tight,
                                       &mx), BL_OK);
  ck_assert_double_eq_tol (mx.x, -r, 1e-7);
}
END_TEST

START_TEST (profile_search_edges)
{
  /* A monotone profile has its maximum on the range's end, and says which end; a flat one on
     the first point (the first largest value); with the caller's error the scan stops. */
  quad q = { 0.0, 2.0, 0.0, 0, 0, 0 };
  double grid[16], val[16];
  bl_profile_max mx;
  ck_assert_int_eq (bl_profile_search (slope_l, &q, -1.0, 1.0, 9, grid, val, NULL, &tight, &mx),
                    BL_OK);
  ck_assert_int_eq (mx.edge, 1);
  ck_assert_double_eq_tol (mx.x, 1.0, 1e-15);
  q.a = -2.0;
  ck_assert_int_eq (bl_profile_search (slope_l, &q, -1.0, 1.0, 9, grid, val, NULL, &tight, &mx),
                    BL_OK);
  ck_assert_int_eq (mx.edge, -1);
  ck_assert_double_eq (mx.x, -1.0);
  q.a = 0.0;
  ck_assert_int_eq (bl_profile_search (slope_l, &q, -1.0, 1.0, 9, grid, val, NULL, &tight, &mx),
                    BL_OK);
  ck_assert_int_eq (mx.edge, -1);
  ck_assert_uint_eq (bl_profile_npoints (0.0, 0.1, 8.0), 3);
  {
    quad s = { 0.5, 1.0, 0.0, 0, 0, 3 };
    ck_assert_int_eq (bl_profile_search (quad_l, &s, -1.0, 1.0, 9, grid, val, &s.status,
                                         &tight, &mx), BL_OK);
    ck_assert_uint_eq (s.calls, 3);
  }
}
END_TEST

static Suite *
profile_suite (void)
{
  Suite *s = suite_create ("profile");
  TCase *ref = tcase_create ("reference");
  TCase *idt = tcase_create ("identities");
  TCase *err = tcase_create ("errors");
  tcase_add_test (ref, profile_quadratic_maximum_and_interval);
  tcase_add_test (idt, profile_grid_stops_on_status);
  tcase_add_test (ref, profile_search_global_of_two);
  tcase_add_test (idt, profile_search_edges);
  tcase_add_test (idt, profile_bracket_ends_and_ties);
  tcase_add_test (idt, profile_open_interval);
  tcase_add_test (idt, profile_tolerances_and_cap);
  tcase_add_test (err, profile_nowhere_unbracketed);
  suite_add_tcase (s, ref);
  suite_add_tcase (s, idt);
  suite_add_tcase (s, err);
  return s;
}

int
main (void)
{
  SRunner *sr = srunner_create (profile_suite ());
  int nf;
  gsl_set_error_handler_off ();
  srunner_run_all (sr, CK_NORMAL);
  nf = srunner_ntests_failed (sr);
  srunner_free (sr);
  return nf == 0 ? EXIT_SUCCESS : EXIT_FAILURE;
}
