/* check_design.c -- the row set and design matrix built from a table and terms.

   The tables are small, hand-made CSV texts about an invented pump fleet (stops, site, kind,
   age in years, load fraction, repair hours, weights).  Expected values are computed in the
   test from the raw cells, independently of design.c: treatment (indicator) coding with the
   reference level left out, products for cross terms, C99 <math.h> for log, sqrt, exp and
   pow.  Treatment coding of categorical predictors is common practice, no source. */
#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "alloc.h"
#include "design.h"
#include "table.h"
#include "terms.h"
#include "testutil.h"

/* Data rows 0..8 are physical lines 2..10.  Row 3 lacks load, row 4 lacks age, row 7 lacks
   stops (and is the only row of site D). */
static const char pumps_csv[] =
  "stops,site,kind,age,load,hours,w\n"
  "3,B,screw,2.385,0.61,12.5,1.5\n"
  "0,A,gear,4.12,0.47,8.25,2\n"
  "7,C,screw,1.07,0.93,30.1,0.75\n"
  "2,B,gear,3.3,,15.2,1\n"
  "5,A,screw,,0.55,22.4,1.25\n"
  "1,C,gear,5.81,0.72,9.6,2.5\n"
  "4,A,gear,2.9,0.38,11.75,1\n"
  ",D,screw,1.5,0.8,14,1\n"
  "6,B,gear,0.75,0.66,19.3,0.5\n";

/* The rows used when the terms need stops, age and load: table rows 0, 1, 2, 5, 6, 8. */
enum { NU = 6 };
static const size_t u_row[NU] = { 0, 1, 2, 5, 6, 8 };
static const size_t u_line[NU] = { 2, 3, 4, 7, 8, 10 };
static const double u_stops[NU] = { 3, 0, 7, 1, 4, 6 };
static const char u_site[NU] = { 'B', 'A', 'C', 'C', 'A', 'B' };
static const int u_screw[NU] = { 1, 0, 1, 0, 0, 0 };
static const double u_age[NU] = { 2.385, 4.12, 1.07, 5.81, 2.9, 0.75 };
static const double u_load[NU] = { 0.61, 0.47, 0.93, 0.72, 0.38, 0.66 };
static const double u_hours[NU] = { 12.5, 8.25, 30.1, 9.6, 11.75, 19.3 };
static const double u_w[NU] = { 1.5, 2, 0.75, 2.5, 1, 0.5 };

static bl_table *
read_table (const char *csv, const char *name)
{
  bl_err err = { 0 };
  bl_table *t = bl_table_read_mem (csv, strlen (csv), name, NULL, &err);
  ck_assert_msg (t != NULL, "read %s: %s: %s", name, err.where, err.msg);
  return t;
}

static bl_terms *
terms_of (const char *text)
{
  bl_err err = { 0 };
  bl_terms *t = bl_terms_parse (text, "--terms", &err);
  ck_assert_msg (t != NULL, "parse '%s': %s", text, err.msg);
  return t;
}

/* Build a design and require success. */
static bl_design *
design_ok (const bl_table *t, const char *resp, const char *terms_text,
           const bl_design_opts *opt)
{
  bl_err err = { 0 };
  bl_terms *terms = terms_of (terms_text);
  bl_design *d = bl_design_new (t, resp, terms, opt, &err);
  ck_assert_msg (d != NULL, "design '%s': %s: %s", terms_text, err.where, err.msg);
  bl_terms_free (terms);
  return d;
}

/* Build a design and require failure with CODE, WHERE and a message containing FRAG. */
static void
design_fails (const bl_table *t, const char *resp, const char *terms_text,
              const bl_design_opts *opt, int code, const char *where, const char *frag)
{
  bl_err err = { 0 };
  bl_terms *terms = terms_text ? terms_of (terms_text) : NULL;
  bl_design *d = bl_design_new (t, resp, terms, opt, &err);
  ck_assert_msg (d == NULL, "design '%s' should fail with '%s'", terms_text, frag);
  ck_assert_msg (err.code == code, "'%s' (%s): code %d, not %d (%s)", terms_text, frag,
                 err.code, code, err.msg);
  ck_assert_msg (strcmp (err.where, where) == 0, "'%s' (%s): where '%s', not '%s'", terms_text,
                 frag, err.where, where);
  ck_assert_msg (strstr (err.msg, frag) != NULL, "'%s': message '%s' lacks '%s'", terms_text,
                 err.msg, frag);
  bl_terms_free (terms);
}

/* The whole of X, n x p column-major. */
static double *
fill_all (const bl_design *d)
{
  const size_t n = bl_design_n (d), p = bl_design_p (d);
  double *x = malloc ((n * p + 1) * sizeof *x);
  ck_assert_ptr_nonnull (x);
  bl_design_fill (d, 0, n, x, n);
  return x;
}

static void
check_labels (const bl_design *d, const char *const *labels, size_t p, const char *name)
{
  ck_assert_msg (bl_design_p (d) == p, "%s: p = %zu, not %zu", name, bl_design_p (d), p);
  for (size_t j = 0; j < p; j++)
    ck_assert_msg (strcmp (bl_design_label (d, j), labels[j]) == 0, "%s: label %zu '%s' != '%s'",
                   name, j, bl_design_label (d, j), labels[j]);
  ck_assert_ptr_null (bl_design_label (d, p));
}

/* ------------------------------------------------------------------ basics */

START_TEST (design_labels_and_values)
{
  bl_table *t = read_table (pumps_csv, "pumps.csv");
  bl_design *d = design_ok (t, "stops", "age, load, site, log(hours), sqrt(load), "
                            "pow(age, 2.5), exp(load), cross(age, load)", NULL);
  static const char *const labels[] = {
    "intercept", "age", "load", "site=B", "site=C", "log(hours)", "sqrt(load)",
    "pow(age,2.5)", "exp(load)", "cross(age,load)"
  };
  double *x;
  check_labels (d, labels, 10, "labels_and_values");
  ck_assert_uint_eq (bl_design_n (d), NU);
  ck_assert_int_eq (bl_design_has_intercept (d), 1);
  ck_assert_str_eq (bl_design_response (d), "stops");
  ck_assert_str_eq (bl_design_source (d), "pumps.csv");
  ck_assert_uint_eq (bl_design_rows_read (d), 9);
  ck_assert_ptr_null (bl_design_offset (d));
  ck_assert_ptr_null (bl_design_prior_w (d));
  x = fill_all (d);
  for (size_t i = 0; i < NU; i++) {
    const double e[10] = {
      1.0, u_age[i], u_load[i], u_site[i] == 'B', u_site[i] == 'C', log (u_hours[i]),
      sqrt (u_load[i]), pow (u_age[i], 2.5), exp (u_load[i]), u_age[i] * u_load[i]
    };
    for (size_t j = 0; j < 10; j++)
      ck_assert_msg (x[j * NU + i] == e[j], "labels_and_values X[%zu,%zu] = %.17g, not %.17g",
                     i, j, x[j * NU + i], e[j]);
    ck_assert_msg (bl_design_y (d)[i] == u_stops[i], "labels_and_values y[%zu]", i);
    ck_assert_msg (bl_design_table_row (d, i) == u_row[i], "labels_and_values row %zu", i);
    ck_assert_msg (bl_design_line (d, i) == u_line[i], "labels_and_values line %zu", i);
  }
  free (x);
  bl_design_free (d);
  bl_table_free (t);
}
END_TEST

/* Indicators for every used level but the reference; cross with numeric and categorical. */
START_TEST (design_cross_terms)
{
  bl_table *t = read_table (pumps_csv, "pumps.csv");
  bl_design *d = design_ok (t, "stops", "cross(site, age), cross(age, site), "
                            "cross(site, kind), cross(cross(site, age), load), "
                            "cross(load, log(hours))", NULL);
  static const char *const labels[] = {
    "intercept", "cross(site=B,age)", "cross(site=C,age)", "cross(age,site=B)",
    "cross(age,site=C)", "cross(site=B,kind=screw)", "cross(site=C,kind=screw)",
    "cross(cross(site=B,age),load)", "cross(cross(site=C,age),load)",
    "cross(load,log(hours))"
  };
  double *x;
  check_labels (d, labels, 10, "cross");
  x = fill_all (d);
  for (size_t i = 0; i < NU; i++) {
    const double b = u_site[i] == 'B', c = u_site[i] == 'C';
    const double e[10] = {
      1.0, b * u_age[i], c * u_age[i], b * u_age[i], c * u_age[i], b * u_screw[i],
      c * u_screw[i], b * u_age[i] * u_load[i], c * u_age[i] * u_load[i],
      u_load[i] * log (u_hours[i])
    };
    for (size_t j = 0; j < 10; j++)
      ck_assert_msg (x[j * NU + i] == e[j], "cross X[%zu,%zu] = %.17g, not %.17g", i, j,
                     x[j * NU + i], e[j]);
  }
  free (x);
  bl_design_free (d);
  bl_table_free (t);
}
END_TEST

/* opt.reference moves the left-out level; other levels keep their byte order. */
START_TEST (design_reference_override)
{
  bl_table *t = read_table (pumps_csv, "pumps.csv");
  const char *const refs[] = { "site=C", "kind=screw" };
  bl_design_opts opt;
  bl_design *d;
  static const char *const labels[] = {
    "intercept", "site=A", "site=B", "kind=gear", "cross(site=A,kind=gear)",
    "cross(site=B,kind=gear)"
  };
  double *x;
  bl_design_opts_init (&opt);
  opt.reference = refs;
  opt.n_reference = 2;
  d = design_ok (t, "stops", "site, kind, cross(site, kind), age, load", &opt);
  ck_assert_uint_eq (bl_design_p (d), 8);
  for (size_t j = 0; j < 6; j++)
    ck_assert_msg (strcmp (bl_design_label (d, j), labels[j]) == 0, "reference label %zu: %s",
                   j, bl_design_label (d, j));
  x = fill_all (d);
  for (size_t i = 0; i < NU; i++) {
    const double a = u_site[i] == 'A', b = u_site[i] == 'B', g = !u_screw[i];
    const double e[6] = { 1.0, a, b, g, a * g, b * g };
    for (size_t j = 0; j < 6; j++)
      ck_assert_msg (x[j * NU + i] == e[j], "reference X[%zu,%zu]", i, j);
  }
  free (x);
  bl_design_free (d);
  bl_table_free (t);
}
END_TEST

/* Levels in byte order (strcmp): 'B' < 'a' < 'b', so B is the default reference.  A level
   found only in dropped rows gives no column, and the reference is chosen among used levels. */
START_TEST (design_levels_used_only)
{
  static const char csv[] =
    "y,g,x\n"
    "1.5,a,2.385\n"
    "2.25,B,\n"            /* B only here, and x is missing: B is not used */
    "3.125,b,1.75\n"
    "0.5,a,0.25\n"
    "4.75,c,3.5\n";
  bl_table *t = read_table (csv, "lev.csv");
  bl_design *d = design_ok (t, "y", "g, x", NULL);
  static const char *const labels[] = { "intercept", "g=b", "g=c", "x" };
  check_labels (d, labels, 4, "levels_used_only");
  ck_assert_uint_eq (bl_design_n (d), 4);
  bl_design_free (d);
  d = design_ok (t, "y", "g", NULL);   /* B used now: it is the reference */
  {
    static const char *const l2[] = { "intercept", "g=a", "g=b", "g=c" };
    check_labels (d, l2, 4, "levels_byte_order");
  }
  bl_design_free (d);
  bl_table_free (t);
}
END_TEST

/* Rows dropped by their first missing column in the order response, terms, weights, offset. */
START_TEST (design_drop_reasons)
{
  static const char csv[] =
    "y,a,b,w,h\n"
    "1.5,2.385,0.5,1.25,3\n"       /* used */
    ",,,,\n"                       /* missing 'y' (first in order) */
    "2.5,,0.75,,4\n"               /* missing 'a' */
    "3.5,1.25,,,\n"                /* missing 'b' */
    "4.5,1.75,0.25,,5\n"           /* missing 'w' */
    "5.5,0.625,1.5,2,\n"           /* missing 'h' (offset) */
    "6.5,,2.5,1,1\n"               /* missing 'a' */
    "7.5,3.125,1.125,0.5,2\n";     /* used */
  bl_table *t = read_table (csv, "drop.csv");
  bl_terms *off = terms_of ("log(h)");
  bl_design_opts opt;
  bl_design *d;
  static const char *const reasons[] = { "missing 'y'", "missing 'a'", "missing 'b'",
                                         "missing 'w'", "missing 'h'" };
  static const size_t counts[] = { 1, 2, 1, 1, 1 };
  bl_design_opts_init (&opt);
  opt.weights = "w";
  opt.offset = off;
  d = design_ok (t, "y", "a, cross(b, a)", &opt);
  ck_assert_uint_eq (bl_design_n (d), 2);
  ck_assert_uint_eq (bl_design_rows_read (d), 8);
  ck_assert_uint_eq (bl_design_ndrop (d), 5);
  for (size_t k = 0; k < 5; k++) {
    size_t c = 0;
    const char *r = bl_design_drop_reason (d, k, &c);
    ck_assert_msg (r && strcmp (r, reasons[k]) == 0, "drop reason %zu: '%s'", k, r);
    ck_assert_msg (c == counts[k], "drop count %zu: %zu", k, c);
  }
  ck_assert_ptr_null (bl_design_drop_reason (d, 5, NULL));
  /* the vectors over the used rows: y, prior weights, offset = log(h) */
  ck_assert_msg (bl_design_y (d)[0] == 1.5 && bl_design_y (d)[1] == 7.5, "drop y");
  ck_assert_msg (bl_design_prior_w (d)[0] == 1.25 && bl_design_prior_w (d)[1] == 0.5,
                 "drop prior_w");
  ck_assert_msg (bl_design_offset (d)[0] == log (3.0) && bl_design_offset (d)[1] == log (2.0),
                 "drop offset");
  ck_assert_uint_eq (bl_design_line (d, 1), 9);
  bl_design_free (d);
  /* Without weights or offset, fewer rows drop and the reasons are fewer. */
  d = design_ok (t, "y", "a", NULL);
  ck_assert_uint_eq (bl_design_n (d), 5);
  ck_assert_uint_eq (bl_design_ndrop (d), 2);
  bl_design_free (d);
  bl_terms_free (off);
  bl_table_free (t);
}
END_TEST

START_TEST (design_no_intercept)
{
  bl_table *t = read_table (pumps_csv, "pumps.csv");
  bl_design_opts opt;
  bl_design *d;
  static const char *const labels[] = { "age", "site=B", "site=C", "load" };
  double *x;
  bl_design_opts_init (&opt);
  opt.intercept = 0;
  d = design_ok (t, "stops", "age, site, load", &opt);
  check_labels (d, labels, 4, "no_intercept");
  ck_assert_int_eq (bl_design_has_intercept (d), 0);
  x = fill_all (d);
  for (size_t i = 0; i < NU; i++)
    ck_assert_msg (x[i] == u_age[i] && x[NU + i] == (u_site[i] == 'B')
                   && x[3 * NU + i] == u_load[i], "no_intercept row %zu", i);
  free (x);
  bl_design_free (d);
  /* An intercept-only design (no terms). */
  {
    bl_err err = { 0 };
    d = bl_design_new (t, "stops", NULL, NULL, &err);
    ck_assert_msg (d != NULL, "intercept only: %s", err.msg);
    ck_assert_uint_eq (bl_design_p (d), 1);
    ck_assert_uint_eq (bl_design_n (d), 8);       /* only the missing response drops */
    bl_design_free (d);
  }
  bl_table_free (t);
}
END_TEST

/* Weights: copied over used rows; NULL when every weight is 1 (design.h). */
START_TEST (design_weights)
{
  bl_table *t = read_table (pumps_csv, "pumps.csv");
  bl_design_opts opt;
  bl_design *d;
  bl_design_opts_init (&opt);
  opt.weights = "w";
  d = design_ok (t, "stops", "age, load", &opt);
  for (size_t i = 0; i < NU; i++)
    ck_assert_msg (bl_design_prior_w (d)[i] == u_w[i], "weights [%zu]", i);
  bl_design_free (d);
  bl_table_free (t);
  t = read_table ("y,x,w\n1.5,2.385,1\n2.5,0.75,1\n", "ones.csv");
  d = design_ok (t, "y", "x", &opt);
  ck_assert_ptr_null (bl_design_prior_w (d));
  bl_design_free (d);
  bl_table_free (t);
}
END_TEST

/* Names needing brackets keep them in labels; categorical labels use the bracketed name. */
START_TEST (design_bracket_names)
{
  static const char csv[] =
    "repair hours,pump site,flow rate\n"
    "12.5,North yard,0.61\n"
    "8.25,East,0.47\n"
    "30.1,North yard,0.93\n";
  bl_table *t = read_table (csv, "names.csv");
  bl_design *d = design_ok (t, "repair hours", "[pump site], log([flow rate]), "
                            "cross([pump site], [flow rate])", NULL);
  static const char *const labels[] = {
    "intercept", "[pump site]=North yard", "log([flow rate])",
    "cross([pump site]=North yard,[flow rate])"
  };
  check_labels (d, labels, 4, "bracket_names");
  bl_design_free (d);
  bl_table_free (t);
}
END_TEST

/* ------------------------------------------------------------------ identities */

/* Filling any block [row0, row0 + nr) with any ld >= nr gives the same numbers, bit for bit,
   as the full fill (the fill is a pure function of the row). */
START_TEST (design_fill_blocks)
{
  bl_table *t = read_table (pumps_csv, "pumps.csv");
  const char *const refs[] = { "site=B" };
  bl_terms *off = terms_of ("log(hours)");
  bl_design_opts opt;
  bl_design *d;
  double *full, blk[64 * 16];
  size_t n, p;
  bl_design_opts_init (&opt);
  opt.reference = refs;
  opt.n_reference = 1;
  opt.offset = off;
  opt.weights = "w";
  d = design_ok (t, "stops", "age, site, kind, pow(load, -0.5), cross(site, kind), "
                 "cross(cross(site, age), exp(load)), cross(age, load)", &opt);
  n = bl_design_n (d);
  p = bl_design_p (d);
  ck_assert_uint_le (p, 16);
  full = fill_all (d);
  for (size_t row0 = 0; row0 < n; row0++)
    for (size_t nr = 1; row0 + nr <= n; nr++)
      for (size_t ld = nr; ld <= nr + 3; ld += 3) {
        for (size_t k = 0; k < sizeof blk / sizeof blk[0]; k++)
          blk[k] = -777.0;                        /* must stay outside the block */
        bl_design_fill (d, row0, nr, blk, ld);
        for (size_t j = 0; j < p; j++) {
          for (size_t i = 0; i < nr; i++)
            ck_assert_msg (memcmp (&blk[j * ld + i], &full[j * n + row0 + i], sizeof (double))
                           == 0, "fill block row0=%zu nr=%zu ld=%zu X[%zu,%zu]", row0, nr, ld,
                           row0 + i, j);
          for (size_t i = nr; i < ld; i++)
            ck_assert_msg (blk[j * ld + i] == -777.0, "fill block wrote outside: row0=%zu "
                           "nr=%zu ld=%zu", row0, nr, ld);
        }
      }
  free (full);
  bl_design_free (d);
  bl_terms_free (off);
  bl_table_free (t);
}
END_TEST

/* log(exp(x)) = x and pow(sqrt(x), 2) = x up to rounding (closed forms); the relative error
   bound 4 eps is from memory for a correctly rounded libm composed twice. */
START_TEST (design_function_identities)
{
  bl_table *t = read_table (pumps_csv, "pumps.csv");
  bl_design *d = design_ok (t, "stops", "age, log(exp(age)), pow(sqrt(age), 2), "
                            "exp(log(load)), load", NULL);
  double *x = fill_all (d);
  for (size_t i = 0; i < NU; i++) {
    const double a = x[1 * NU + i], l = x[5 * NU + i];
    ck_assert_msg (fabs (x[2 * NU + i] - a) <= 4 * 2.220446049250313e-16 * a, "log(exp) %zu", i);
    ck_assert_msg (fabs (x[3 * NU + i] - a) <= 4 * 2.220446049250313e-16 * a, "pow(sqrt) %zu", i);
    ck_assert_msg (fabs (x[4 * NU + i] - l) <= 4 * 2.220446049250313e-16 * l, "exp(log) %zu", i);
  }
  free (x);
  bl_design_free (d);
  bl_table_free (t);
}
END_TEST

/* ------------------------------------------------------------------ errors */

START_TEST (design_errors_spec)
{
  bl_table *t = read_table (pumps_csv, "pumps.csv");
  bl_terms *off2 = terms_of ("log(hours), age"), *offc = terms_of ("site"),
           *offx = terms_of ("log(hourz)");
  bl_design_opts o;
  design_fails (t, "stop", "age", NULL, BL_ESPEC, "--response", "no column 'stop' in pumps.csv");
  design_fails (t, NULL, "age", NULL, BL_ESPEC, "--response", "no response column given");
  /* A column categorical by its cells is a data error naming its first label (exit 1); one
     declared categorical is the caller's contradiction (exit 2): common practice, no source. */
  design_fails (t, "site", "age", NULL, BL_EDATA, "pumps.csv:2:2",
                "'site' is categorical: 9 of its 9 non-missing cells are not numbers, the first "
                "'B' here (--response); the response must be numeric");
  design_fails (t, "stops", "age, agee", NULL, BL_ESPEC, "--terms", "no column 'agee'");
  design_fails (t, "stops", "cross(age, [Site])", NULL, BL_ESPEC, "--terms", "no column 'Site'");
  design_fails (t, "stops", "log(site)", NULL, BL_EDATA, "pumps.csv:2:2",
                "(--terms); log(site): log needs a numeric argument");
  design_fails (t, "stops", "age, sqrt(kind)", NULL, BL_EDATA, "pumps.csv:2:3",
                "'kind' is categorical: 9 of its 9 non-missing cells are not numbers, the "
                "first 'screw' here (--terms); sqrt(kind): sqrt needs");
  design_fails (t, "stops", "exp(site)", NULL, BL_EDATA, "pumps.csv:2:2", "exp(site): exp");
  design_fails (t, "stops", "pow(cross(site, age), 2)", NULL, BL_EDATA, "pumps.csv:2:2",
                "pow(cross(site,age),2): pow needs");
  bl_design_opts_init (&o);
  o.weights = "wt";
  design_fails (t, "stops", "age", &o, BL_ESPEC, "--weights", "no column 'wt'");
  o.weights = "kind";
  design_fails (t, "stops", "age", &o, BL_EDATA, "pumps.csv:2:3",
                "'kind' is categorical: 9 of its 9 non-missing cells are not numbers");
  bl_design_opts_init (&o);
  o.offset = off2;
  design_fails (t, "stops", "age", &o, BL_ESPEC, "--offset", "exactly one term, not 2");
  o.offset = offc;
  design_fails (t, "stops", "age", &o, BL_EDATA, "pumps.csv:2:2",
                "(--offset); the offset must be numeric");
  o.offset = offx;
  design_fails (t, "stops", "age", &o, BL_ESPEC, "--offset", "no column 'hourz'");
  bl_design_opts_init (&o);
  o.intercept = 0;
  design_fails (t, "stops", NULL, &o, BL_ESPEC, "--terms", "the design has no columns");
  {
    /* declared categorical: the contradiction is the caller's (BL_ESPEC at the option) */
    static const char *const cat[] = { "age" };
    bl_table_opts to;
    bl_err e = { 0 };
    bl_table *tc;
    bl_table_opts_init (&to);
    to.categorical = cat;
    to.n_categorical = 1;
    tc = bl_table_read_mem (pumps_csv, strlen (pumps_csv), "pumps.csv", &to, &e);
    ck_assert_msg (tc != NULL, "%s", e.msg);
    design_fails (tc, "age", "load", NULL, BL_ESPEC, "--response",
                  "'age' is categorical (declared); the response must be numeric");
    bl_design_opts_init (&o);
    o.weights = "age";
    design_fails (tc, "stops", "load", &o, BL_ESPEC, "--weights",
                  "'age' is categorical (declared); weights must be numeric");
    bl_table_free (tc);
  }
  bl_terms_free (off2);
  bl_terms_free (offc);
  bl_terms_free (offx);
  bl_table_free (t);
}
END_TEST

START_TEST (design_errors_reference)
{
  bl_table *t = read_table (pumps_csv, "pumps.csv");
  static const struct { const char *ref[2]; size_t n; const char *msg; } c[] = {
    { { "siteB" }, 1, "'siteB' is not of the form COL=LEVEL" },
    { { "=B" }, 1, "'=B' is not of the form COL=LEVEL" },
    { { "place=B" }, 1, "no column 'place' in pumps.csv" },
    { { "age=2" }, 1, "'age' is numeric; a reference level needs a categorical column" },
    { { "site=Z" }, 1, "'site' has no level 'Z'" },
    { { "site=" }, 1, "'site' has no level ''" },
    { { "site=B", "site=C" }, 2, "more than one reference level for 'site'" },
    { { "site=D" }, 1, "level 'D' of 'site' does not occur in the rows used" }
  };
  for (size_t i = 0; i < sizeof c / sizeof c[0]; i++) {
    bl_design_opts o;
    bl_design_opts_init (&o);
    o.reference = c[i].ref;
    o.n_reference = c[i].n;
    design_fails (t, "stops", "site, age", &o, BL_ESPEC, "--reference", c[i].msg);
  }
  {
    /* A repeated, identical entry is not a conflict; an unused column's entry is checked but
       harmless. */
    const char *const ok[] = { "site=C", "site=C", "kind=screw" };
    bl_design_opts o;
    bl_design *d;
    bl_design_opts_init (&o);
    o.reference = ok;
    o.n_reference = 3;
    d = design_ok (t, "stops", "site", &o);
    ck_assert_str_eq (bl_design_label (d, 1), "site=A");
    bl_design_free (d);
  }
  bl_table_free (t);
}
END_TEST

/* A column name with '=' in it: the first prefix that names a column is the column. */
START_TEST (design_reference_name_with_equals)
{
  bl_table *t = read_table ("y,a=b,c\n1.5,u,v\n2.5,w,v\n3.5,u,x\n", "eq.csv");
  const char *const refs[] = { "a=b=w" };
  bl_design_opts o;
  bl_design *d;
  bl_design_opts_init (&o);
  o.reference = refs;
  o.n_reference = 1;
  d = design_ok (t, "y", "[a=b]", &o);
  ck_assert_str_eq (bl_design_label (d, 1), "[a=b]=u");
  bl_design_free (d);
  bl_table_free (t);
}
END_TEST

/* Data errors: where = "FILE:LINE" of the row (row 0 spans lines 2-3, so row 1 is line 4). */
START_TEST (design_errors_domain)
{
  static const char csv[] =
    "y,x,z,note\n"
    "1.5,2.385,-3,\"two\nlines\"\n"
    "2.25,0,0.5,b\n"
    "3.125,-1.5,800,c\n";
  bl_table *t = read_table (csv, "dom.csv");
  bl_terms *off = terms_of ("log(z)");
  bl_design_opts o;
  static const struct { const char *terms, *where, *msg; } c[] = {
    { "log(z)", "dom.csv:2", "log(z): value -3 is not > 0" },
    { "x, log(x)", "dom.csv:4", "log(x): value 0 is not > 0" },
    { "sqrt(x)", "dom.csv:5", "sqrt(x): value -1.5 is not >= 0" },
    { "exp(z)", "dom.csv:5", "exp(z): value 800 overflows in exp" },
    { "pow(x, -1)", "dom.csv:4", "pow(x,-1): value 0 to the power -1 is not finite" },
    { "pow(x, 0.5)", "dom.csv:5", "pow(x,0.5): value -1.5 to the power 0.5 is not a real "
      "number" },
    { "pow(z, 200)", "dom.csv:5", "pow(z,200): value 800 to the power 200 overflows" },
    { "log(pow(x, 2))", "dom.csv:4", "log(pow(x,2)): value 0 is not > 0" },
    { "log(cross(pow(z, 100), pow(z, 100)))", "dom.csv:5",
      "cross(pow(z,100),pow(z,100)): product of 2.037035976334486e+290 and "
      "2.037035976334486e+290 overflows" },
    { "cross(pow(z, 100), pow(z, 100))", "dom.csv:5",
      "cross(pow(z,100),pow(z,100)): product of 2.037035976334486e+290 and "
      "2.037035976334486e+290 overflows" },
    { "cross(note, cross(pow(z, 100), pow(z, 100)))", "dom.csv:5",
      "cross(note=c,cross(pow(z,100),pow(z,100))): product of 2.037035976334486e+290" }
  };
  for (size_t i = 0; i < sizeof c / sizeof c[0]; i++)
    design_fails (t, "y", c[i].terms, NULL, BL_EDATA, c[i].where, c[i].msg);
  bl_design_opts_init (&o);
  o.offset = off;
  design_fails (t, "y", "x", &o, BL_EDATA, "dom.csv:2", "log(z): value -3 is not > 0");
  o.offset = NULL;
  o.weights = "z";
  design_fails (t, "y", "x", &o, BL_EDATA, "dom.csv:2", "weight -3 is not > 0");
  o.weights = "x";
  design_fails (t, "y", "z", &o, BL_EDATA, "dom.csv:4", "weight 0 is not > 0");
  bl_terms_free (off);
  bl_table_free (t);
}
END_TEST

START_TEST (design_errors_no_rows)
{
  bl_table *t = read_table ("y,a,b\n1.5,,2\n,3,4\n2.5,,\n", "none.csv");
  design_fails (t, "y", "a, b", NULL, BL_EDATA, "none.csv",
                "no rows left: 3 read, all dropped (missing 'y': 1, missing 'a': 2)");
  bl_table_free (t);
  t = read_table ("y,a\n", "empty.csv");
  design_fails (t, "y", "a", NULL, BL_EDATA, "empty.csv", "no rows left: 0 read");
  bl_table_free (t);
}
END_TEST

/* The N-th allocation fails for N = 1, 2, ... until bl_design_new succeeds: each failure is
   NULL + BL_ENOMEM, and ASan's leak check at exit finds nothing (SQLite's malloc tests). */
START_TEST (design_errors_alloc_failure)
{
  bl_table *t = read_table (pumps_csv, "pumps.csv");
  bl_terms *terms = terms_of ("age, site, log(hours), cross(site, kind), "
                              "cross(cross(site, age), exp(load)), cross(log(hours), site), load");
  bl_terms *off = terms_of ("log(hours)");
  const char *const refs[] = { "site=B" };
  bl_design_opts opt;
  bl_design *d;
  unsigned long n;
  bl_design_opts_init (&opt);
  opt.reference = refs;
  opt.n_reference = 1;
  opt.offset = off;
  opt.weights = "w";
  bl_alloc_fail_at (0);
  d = bl_design_new (t, "stops", terms, &opt, NULL);
  ck_assert_ptr_nonnull (d);
  bl_design_free (d);
  if (bl_alloc_count () > 0) {
    for (n = 1;; n++) {
      bl_err err = { 0 };
      bl_alloc_fail_at (n);
      d = bl_design_new (t, "stops", terms, &opt, &err);
      if (d)
        break;
      ck_assert_msg (err.code == BL_ENOMEM, "alloc failure n=%lu: code %d (%s: %s)", n,
                     err.code, err.where, err.msg);
    }
    bl_alloc_fail_at (0);
    ck_assert_msg (n > 10, "alloc failure: only %lu allocations", n);
    bl_design_free (d);
  }
  bl_terms_free (off);
  bl_terms_free (terms);
  bl_table_free (t);
}
END_TEST

static Suite *
design_suite (void)
{
  Suite *s = suite_create ("design");
  TCase *idt = tcase_create ("identities");
  TCase *err = tcase_create ("errors");
  TCase *bas = tcase_create ("basics");
  tcase_add_test (bas, design_labels_and_values);
  tcase_add_test (bas, design_cross_terms);
  tcase_add_test (bas, design_reference_override);
  tcase_add_test (bas, design_levels_used_only);
  tcase_add_test (bas, design_drop_reasons);
  tcase_add_test (bas, design_no_intercept);
  tcase_add_test (bas, design_weights);
  tcase_add_test (bas, design_bracket_names);
  tcase_add_test (idt, design_fill_blocks);
  tcase_add_test (idt, design_function_identities);
  tcase_add_test (err, design_errors_spec);
  tcase_add_test (err, design_errors_reference);
  tcase_add_test (bas, design_reference_name_with_equals);
  tcase_add_test (err, design_errors_domain);
  tcase_add_test (err, design_errors_no_rows);
  tcase_add_test (err, design_errors_alloc_failure);
  suite_add_tcase (s, idt);
  suite_add_tcase (s, err);
  suite_add_tcase (s, bas);
  return s;
}

int
main (void)
{
  return test_run_suite (design_suite (), 0);
}
