/* model.c -- a fitted model saved as JSON (doc/model-format.md), read back, and applied to
   new data: means with confidence intervals, and prediction intervals for a new observation.

   Writing uses the streaming writer (jsonw.h, numbers %.17g, so every double reads back
   bit for bit); reading uses Jansson.  Prediction rebuilds the design of the fit on the new
   table with the saved categorical levels fixed (bl_design_levels), so that the columns and
   labels are those of the fit whatever levels the new data happen to hold, and computes

     eta_i = x_i'b + offset_i,  se_i = sqrt(x_i' V x_i)   (V the saved covariance; aliased
                                                           coefficients count as 0)

   Intervals (q = t quantile on dof_resid when the fit's Wald statistics were t, else the
   normal quantile, at (1 + level) / 2):
   - mean, GLM and least squares: g^-1(eta -/+ q se), the Wald interval on the link scale
     mapped back (McCullagh & Nelder 1989, Generalized Linear Models, 2nd ed., section 4.4;
     for the identity link this is x'b -/+ t se);
   - mean, transformed response: Duan's (1983, JASA 78, 605-610) smeared mean
     m(xb) = (1/n) sum h^-1(xb + e_i) - shift, with the delta-method interval
     m -/+ q |m'(xb)| se (delta method: e.g. Casella & Berger 2002, Statistical Inference,
     section 5.5.4);
   - new observation, gaussian (OLS, WLS, gaussian GLM): mu -/+ t sqrt(s^2 v / a + (dmu/deta)^2
     se^2), s^2 the Pearson dispersion, v the variance function's value (1; x^K; mu^K) and
     a the prior weight (the textbook interval: e.g. Draper & Smith 1998, Applied Regression
     Analysis, 3rd ed., section 3.2, for the identity link);
   - new observation, transformed response: the transformed-scale interval above mapped back
     by the naive inverse h^-1(z) - shift, which is monotone;
   - new observation, poisson: the alpha/2 and 1 - alpha/2 quantiles of Poisson(mu); gamma:
     of Gamma(shape a / phi, scale mu phi / a); inverse gaussian: of IG(mu, lambda = a / phi),
     phi the ML dispersion.  These treat mu and phi as known: parameter uncertainty is not
     included (common practice, no source). */
#include <errno.h>
#include <float.h>
#include <limits.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <string.h>
#include <sys/stat.h>
#include <gsl/gsl_cdf.h>
#include "tweedie.h"
#include <gsl/gsl_sf_erf.h>
#include <jansson.h>
#include "alloc.h"
#include "ballast.h"
#include "design.h"
#include "jsonw.h"
#include "model.h"

#define FORMAT_NAME "ballast-model"
#define BLOCK 256                 /* rows of X filled at a time */
#define IG_BISECT_MAX 400         /* bisection steps of the inverse gaussian quantile */

typedef struct model_cat {
  char *column, *reference;
  char **levels;
  size_t nlevels;
} model_cat;

struct bl_model {
  char *path;
  int version;
  char *response, *weights, *var_col;
  int intercept;
  bl_terms *terms, *offset;
  model_cat *cat;
  size_t ncat;
  bl_design_levels *dl;           /* the same, as design options */
  const char **catnames;          /* for bl_model_table_opts */
  size_t p;
  char **labels;
  double *beta, *cov;             /* beta NAN when aliased; cov p x p column-major */
  bl_method method;
  const bl_family *fam;
  const bl_link *link;
  bl_variance var_kind;
  double power;
  bl_transform tr;
  double lambda, shift;
  size_t smear_n, nres;           /* residuals in the fit, and kept */
  double *res;
  double smear_mean_exp, smear_mean, smear_mean_sq, smear_min;
  double phi_used, phi_pearson, phi_ml, level;
  double fam_par;                 /* negative binomial theta, Tweedie power */
  size_t n, rank, dof_resid;
  int wald_is_t;
};

/* ---------------------------------------------------------------- writing */

static const char *
transform_name (bl_transform k)
{
  switch (k) {
  case BL_TRANSFORM_LOG: return "log";
  case BL_TRANSFORM_SQRT: return "sqrt";
  case BL_TRANSFORM_BOXCOX: return "boxcox";
  default: return "none";
  }
}

static const char *
variance_name (bl_variance k)
{
  return k == BL_VARIANCE_COLUMN ? "column" : k == BL_VARIANCE_FITTED ? "fitted" : "none";
}

/* The smearing summaries over all N residuals e_i = y_i - mu_i of a transformed fit (the
   fit's own sums, bl_fit_transform_info, as bl_fit_backtransform uses them), and every
   stride-th residual (the subsample of bl_fit_backtransform above BL_SMEAR_MAX, here with
   BL_MODEL_RESIDUALS_MAX). */
static void
write_smearing (bl_jsonw *w, const bl_fit *fit)
{
  const size_t n = bl_fit_stats_get (fit)->n;
  const double *y = bl_fit_y (fit), *mu = bl_fit_mu (fit);
  const size_t stride = n > BL_MODEL_RESIDUALS_MAX
                        ? (n + BL_MODEL_RESIDUALS_MAX - 1) / BL_MODEL_RESIDUALS_MAX : 1;
  const bl_fit_transform_info *tr = bl_fit_transform (fit);
  const long double se = tr->smear_sum_exp, s1 = tr->smear_sum, s2 = tr->smear_sum_sq;
  const double emin = n ? tr->smear_min : HUGE_VAL;
  jw_obj (w, "smearing");
  jw_size (w, "n", n);
  jw_size (w, "stride", stride);
  jw_num (w, "mean_exp", n ? (double) (se / (long double) n) : NAN);
  jw_num (w, "mean", n ? (double) (s1 / (long double) n) : NAN);
  jw_num (w, "mean_sq", n ? (double) (s2 / (long double) n) : NAN);
  jw_num (w, "min", emin);
  jw_arr (w, "residuals");
  for (size_t i = 0; i < n; i += stride)
    jw_num (w, NULL, y[i] - mu[i]);
  jw_arr_end (w);
  jw_obj_end (w);
}

int
bl_model_write (FILE *out, const bl_fit *fit, const bl_terms *terms, const bl_terms *offset,
                const char *weights, bl_err *err)
{
  const bl_design *d = bl_fit_design (fit);
  const bl_fit_stats *st = bl_fit_stats_get (fit);
  const bl_fit_transform_info *tr = bl_fit_transform (fit);
  const bl_fit_variance_info *vi = bl_fit_variance (fit);
  const double *beta = bl_fit_beta (fit), *cov = bl_fit_cov (fit);
  const int *aliased = bl_fit_aliased (fit);
  const size_t p = bl_design_p (d);
  char varcol[sizeof vi->expr];
  bl_jsonw w;

  if (!st->converged)
    return bl_fail (err, BL_EDATA, "model", "the fit did not converge; there is no model to "
                    "save");
  /* The variance column's name: the resolved expression "COL^K" up to its last '^'. */
  varcol[0] = '\0';
  if (vi->kind == BL_VARIANCE_COLUMN) {
    const char *caret = strrchr (vi->expr, '^');
    const size_t len = caret ? (size_t) (caret - vi->expr) : 0;
    if (!caret || strlen (vi->expr) + 1 >= sizeof vi->expr)
      return bl_fail (err, BL_EINTERNAL, "model", "cannot recover the variance column from "
                      "'%s'", vi->expr);
    memcpy (varcol, vi->expr, len);
    varcol[len] = '\0';
  }

  jw_init (&w, out);
  jw_obj (&w, NULL);
  jw_str (&w, "format", FORMAT_NAME);
  jw_size (&w, "format_version", BL_MODEL_FORMAT);
  jw_str (&w, "ballast_version", bl_version ());
  jw_str (&w, "source", bl_design_source (d));
  jw_str (&w, "response", bl_design_response (d));
  jw_bool (&w, "intercept", bl_design_has_intercept (d));
  jw_arr (&w, "terms");
  for (size_t i = 0; i < bl_terms_count (terms); i++)
    jw_str (&w, NULL, bl_terms_get (terms, i)->label);
  jw_arr_end (&w);
  jw_str (&w, "offset", offset ? bl_terms_get (offset, 0)->label : NULL);
  jw_str (&w, "weights", weights);
  jw_arr (&w, "categorical");
  for (size_t i = 0; i < bl_design_ncat (d); i++) {
    jw_obj (&w, NULL);
    jw_str (&w, "column", bl_design_cat_column (d, i));
    jw_arr (&w, "levels");
    for (size_t k = 0; k < bl_design_cat_nlevels (d, i); k++)
      jw_str (&w, NULL, bl_design_cat_level (d, i, k));
    jw_arr_end (&w);
    jw_str (&w, "reference", bl_design_cat_reference (d, i));
    jw_obj_end (&w);
  }
  jw_arr_end (&w);
  jw_arr (&w, "columns");
  for (size_t j = 0; j < p; j++)
    jw_str (&w, NULL, bl_design_label (d, j));
  jw_arr_end (&w);
  jw_str (&w, "method", bl_method_name (bl_fit_method (fit)));
  jw_str (&w, "family", bl_fit_family (fit)->name);
  jw_str (&w, "link", bl_fit_link (fit)->name);
  if (bl_fit_family (fit)->par_name)
    jw_num (&w, "family_par", bl_fit_family_par (fit));
  else
    jw_null (&w, "family_par");
  jw_obj (&w, "variance");
  jw_str (&w, "kind", variance_name (vi->kind));
  jw_str (&w, "column", vi->kind == BL_VARIANCE_COLUMN ? varcol : NULL);
  if (vi->kind == BL_VARIANCE_NONE)
    jw_null (&w, "power");
  else
    jw_num (&w, "power", vi->power);
  jw_str (&w, "expr", vi->expr);
  jw_obj_end (&w);
  jw_obj (&w, "transform");
  jw_str (&w, "kind", transform_name (tr->kind));
  if (tr->kind == BL_TRANSFORM_BOXCOX)
    jw_num (&w, "lambda", tr->lambda);
  else
    jw_null (&w, "lambda");
  jw_num (&w, "shift", tr->kind == BL_TRANSFORM_NONE ? 0.0 : tr->shift);
  jw_obj_end (&w);
  if (tr->kind != BL_TRANSFORM_NONE)
    write_smearing (&w, fit);
  else
    jw_null (&w, "smearing");
  jw_arr (&w, "coef");
  for (size_t j = 0; j < p; j++)
    if (aliased[j])
      jw_null (&w, NULL);
    else
      jw_num (&w, NULL, beta[j]);
  jw_arr_end (&w);
  jw_arr (&w, "cov");
  for (size_t j = 0; j < p; j++) {
    jw_arr (&w, NULL);
    for (size_t k = 0; k < p; k++)
      if (aliased[j] || aliased[k])
        jw_null (&w, NULL);
      else
        jw_num (&w, NULL, cov[j + k * p]);
    jw_arr_end (&w);
  }
  jw_arr_end (&w);
  jw_str (&w, "se_kind", st->se_kind);
  jw_num (&w, "dispersion", st->phi_used);
  jw_num (&w, "phi_pearson", st->phi_pearson);
  jw_num (&w, "phi_ml", st->phi_ml);
  jw_size (&w, "n", st->n);
  jw_size (&w, "rank", st->rank);
  jw_size (&w, "dof_resid", st->dof_resid);
  jw_bool (&w, "wald_is_t", st->wald_is_t);
  jw_num (&w, "level", st->level);
  jw_obj_end (&w);
  if (jw_finish (&w) || fflush (out) != 0)
    return bl_fail (err, BL_EIO, "model", "write failed: %s", strerror (errno));
  return BL_OK;
}

/* ---------------------------------------------------------------- reading */

void
bl_model_free (bl_model *m)
{
  if (!m)
    return;
  bl_free (m->path);
  bl_free (m->response);
  bl_free (m->weights);
  bl_free (m->var_col);
  bl_terms_free (m->terms);
  bl_terms_free (m->offset);
  for (size_t i = 0; m->cat && i < m->ncat; i++) {
    bl_free (m->cat[i].column);
    bl_free (m->cat[i].reference);
    for (size_t k = 0; m->cat[i].levels && k < m->cat[i].nlevels; k++)
      bl_free (m->cat[i].levels[k]);
    bl_free (m->cat[i].levels);
  }
  bl_free (m->cat);
  bl_free (m->dl);
  bl_free ((void *) m->catnames);
  for (size_t j = 0; m->labels && j < m->p; j++)
    bl_free (m->labels[j]);
  bl_free (m->labels);
  bl_free (m->beta);
  bl_free (m->cov);
  bl_free (m->res);
  bl_free (m);
}

/* State of one read: the file name for messages and the error record. */
typedef struct reader {
  const char *path;
  bl_err *err;
  int status;                     /* first error, else BL_OK */
} reader;

/* Record that KEY is wrong (BL_EDATA, where = the file); returns NULL for convenience. */
static void *
bad (reader *r, const char *key, const char *what)
{
  if (r->status == BL_OK)
    r->status = bl_fail (r->err, BL_EDATA, r->path, "'%s': %s", key, what);
  return NULL;
}

static void *
nomem (reader *r)
{
  if (r->status == BL_OK)
    r->status = bl_fail (r->err, BL_ENOMEM, r->path, "out of memory reading the model");
  return NULL;
}

static json_t *
member (reader *r, const json_t *obj, const char *key)
{
  json_t *v = json_object_get (obj, key);
  return v ? v : bad (r, key, "missing");
}

/* A copy of the string at KEY (NULL allowed when NULLOK; then *OUT stays NULL). */
static int
get_str (reader *r, const json_t *obj, const char *key, int nullok, char **out)
{
  json_t *v = member (r, obj, key);
  *out = NULL;
  if (!v)
    return r->status;
  if (json_is_null (v) && nullok)
    return BL_OK;
  if (!json_is_string (v)) {
    bad (r, key, nullok ? "expected a string or null" : "expected a string");
    return r->status;
  }
  if (!(*out = bl_strdup (json_string_value (v))))
    nomem (r);
  return r->status;
}

/* The number at V (null is NAN when NULLOK). */
static int
num_of (reader *r, const json_t *v, const char *key, int nullok, double *out)
{
  if (v && json_is_null (v) && nullok) {
    *out = NAN;
    return BL_OK;
  }
  if (!v || !json_is_number (v)) {
    bad (r, key, nullok ? "expected a number or null" : "expected a number");
    return r->status;
  }
  *out = json_number_value (v);
  return BL_OK;
}

static int
get_num (reader *r, const json_t *obj, const char *key, int nullok, double *out)
{
  json_t *v = member (r, obj, key);
  return v ? num_of (r, v, key, nullok, out) : r->status;
}

static int
get_size (reader *r, const json_t *obj, const char *key, size_t *out)
{
  json_t *v = member (r, obj, key);
  if (!v)
    return r->status;
  if (!json_is_integer (v) || json_integer_value (v) < 0) {
    bad (r, key, "expected a non-negative integer");
    return r->status;
  }
  *out = (size_t) json_integer_value (v);
  return BL_OK;
}

static int
get_bool (reader *r, const json_t *obj, const char *key, int *out)
{
  json_t *v = member (r, obj, key);
  if (!v)
    return r->status;
  if (!json_is_boolean (v)) {
    bad (r, key, "expected true or false");
    return r->status;
  }
  *out = json_is_true (v);
  return BL_OK;
}

/* The array at KEY, of N elements when N is not 0 (0: any length). */
static json_t *
get_arr (reader *r, const json_t *obj, const char *key, size_t n)
{
  json_t *v = member (r, obj, key);
  char msg[80];
  if (!v)
    return NULL;
  if (!json_is_array (v))
    return bad (r, key, "expected an array");
  if (n && json_array_size (v) != n) {
    snprintf (msg, sizeof msg, "expected %zu entries, found %zu", n, json_array_size (v));
    return bad (r, key, msg);
  }
  return v;
}

/* The strings of array A (KEY for messages) joined by SEP into a new string. */
static char *
join_strings (reader *r, const json_t *a, const char *key, const char *sep)
{
  size_t len = 1, i;
  json_t *v;
  char *s;
  json_array_foreach (a, i, v) {
    if (!json_is_string (v))
      return bad (r, key, "expected an array of strings");
    len += strlen (json_string_value (v)) + strlen (sep);
  }
  if (!(s = bl_malloc (len)))
    return nomem (r);
  s[0] = '\0';
  json_array_foreach (a, i, v) {
    if (i)
      strcat (s, sep);
    strcat (s, json_string_value (v));
  }
  return s;
}

static int
read_terms (reader *r, bl_model *m, const json_t *root)
{
  const json_t *a = get_arr (r, root, "terms", 0);
  char *text = NULL, *off = NULL;
  bl_err e;
  if (!a)
    return r->status;
  if (json_array_size (a) > 0) {
    if (!(text = join_strings (r, a, "terms", ", ")))
      return r->status;
    m->terms = bl_terms_parse (text, "terms", &e);
    bl_free (text);
    if (!m->terms) {
      if (e.code == BL_ENOMEM)
        return nomem (r), r->status;
      char msg[600];
      snprintf (msg, sizeof msg, "not valid terms (%s)", e.msg);
      return bad (r, "terms", msg), r->status;
    }
    if (bl_terms_count (m->terms) != json_array_size (a))
      return bad (r, "terms", "each entry must be one term"), r->status;
  }
  if (get_str (r, root, "offset", 1, &off) != BL_OK)
    return r->status;
  if (off) {
    m->offset = bl_terms_parse (off, "offset", &e);
    bl_free (off);
    if (!m->offset)
      return e.code == BL_ENOMEM ? (nomem (r), r->status)
                                 : (bad (r, "offset", "not a valid term"), r->status);
    if (bl_terms_count (m->offset) != 1)
      return bad (r, "offset", "expected one term"), r->status;
  }
  return BL_OK;
}

static int
read_categorical (reader *r, bl_model *m, const json_t *root)
{
  const json_t *a = get_arr (r, root, "categorical", 0);
  size_t i;
  json_t *c;
  if (!a)
    return r->status;
  m->ncat = json_array_size (a);
  m->cat = bl_calloc (m->ncat ? m->ncat : 1, sizeof *m->cat);
  m->dl = bl_calloc (m->ncat ? m->ncat : 1, sizeof *m->dl);
  m->catnames = bl_calloc (m->ncat ? m->ncat : 1, sizeof *m->catnames);
  if (!m->cat || !m->dl || !m->catnames) {
    m->ncat = 0;
    return nomem (r), r->status;
  }
  json_array_foreach (a, i, c) {
    model_cat *mc = &m->cat[i];
    const json_t *lv;
    size_t k;
    json_t *v;
    if (!json_is_object (c))
      return bad (r, "categorical", "expected an array of objects"), r->status;
    if (get_str (r, c, "column", 0, &mc->column) != BL_OK
        || get_str (r, c, "reference", 0, &mc->reference) != BL_OK
        || !(lv = get_arr (r, c, "levels", 0)))
      return r->status;
    mc->levels = bl_calloc (json_array_size (lv) + 1, sizeof *mc->levels);
    if (!mc->levels)
      return nomem (r), r->status;
    json_array_foreach (lv, k, v) {
      if (!json_is_string (v))
        return bad (r, "levels", "expected an array of strings"), r->status;
      if (!(mc->levels[mc->nlevels++] = bl_strdup (json_string_value (v))))
        return nomem (r), r->status;
    }
    m->dl[i].column = mc->column;
    m->dl[i].levels = (const char *const *) mc->levels;
    m->dl[i].nlevels = mc->nlevels;
    m->dl[i].reference = mc->reference;
    m->catnames[i] = mc->column;
  }
  return BL_OK;
}

static int
read_kinds (reader *r, bl_model *m, const json_t *root)
{
  char *s = NULL;
  const json_t *v;
  int status = BL_OK;
  if (get_str (r, root, "method", 0, &s) != BL_OK)
    return r->status;
  if (!strcmp (s, "glm"))
    m->method = BL_METHOD_GLM;
  else if (!strcmp (s, "ols"))
    m->method = BL_METHOD_OLS;
  else if (!strcmp (s, "wls"))
    m->method = BL_METHOD_WLS;
  else
    status = (bad (r, "method", "expected glm, ols or wls"), r->status);
  bl_free (s);
  if (status != BL_OK || get_str (r, root, "family", 0, &s) != BL_OK)
    return r->status;
  if (!(m->fam = bl_family_find (s)))
    bad (r, "family", "unknown family");
  bl_free (s);
  if (r->status != BL_OK || get_str (r, root, "link", 0, &s) != BL_OK)
    return r->status;
  if (!(m->link = bl_link_find (s)))
    bad (r, "link", "unknown link");
  bl_free (s);
  if (r->status != BL_OK)
    return r->status;

  if (!(v = member (r, root, "variance")) || !json_is_object (v))
    return v ? (bad (r, "variance", "expected an object"), r->status) : r->status;
  if (get_str (r, v, "kind", 0, &s) != BL_OK)
    return r->status;
  m->var_kind = !strcmp (s, "column") ? BL_VARIANCE_COLUMN
                : !strcmp (s, "fitted") ? BL_VARIANCE_FITTED : BL_VARIANCE_NONE;
  if (m->var_kind == BL_VARIANCE_NONE && strcmp (s, "none") != 0)
    bad (r, "kind", "expected none, column or fitted");
  bl_free (s);
  if (r->status != BL_OK
      || get_str (r, v, "column", m->var_kind != BL_VARIANCE_COLUMN, &m->var_col) != BL_OK
      || get_num (r, v, "power", m->var_kind == BL_VARIANCE_NONE, &m->power) != BL_OK)
    return r->status;
  if (m->var_kind != BL_VARIANCE_NONE && m->method != BL_METHOD_WLS)
    return bad (r, "variance", "a variance function needs method wls"), r->status;

  if (!(v = member (r, root, "transform")) || !json_is_object (v))
    return v ? (bad (r, "transform", "expected an object"), r->status) : r->status;
  if (get_str (r, v, "kind", 0, &s) != BL_OK)
    return r->status;
  m->tr = !strcmp (s, "log") ? BL_TRANSFORM_LOG : !strcmp (s, "sqrt") ? BL_TRANSFORM_SQRT
          : !strcmp (s, "boxcox") ? BL_TRANSFORM_BOXCOX : BL_TRANSFORM_NONE;
  if (m->tr == BL_TRANSFORM_NONE && strcmp (s, "none") != 0)
    bad (r, "kind", "expected none, log, sqrt or boxcox");
  bl_free (s);
  if (r->status != BL_OK
      || get_num (r, v, "lambda", m->tr != BL_TRANSFORM_BOXCOX, &m->lambda) != BL_OK
      || get_num (r, v, "shift", 0, &m->shift) != BL_OK)
    return r->status;
  if (m->tr != BL_TRANSFORM_NONE
      && (m->method != BL_METHOD_OLS || m->fam != &bl_family_gaussian
          || m->link != &bl_link_identity))
    return bad (r, "transform", "a transformed response needs method ols"), r->status;
  if ((m->method != BL_METHOD_GLM)
      && (m->fam != &bl_family_gaussian || m->link != &bl_link_identity))
    return bad (r, "method", "least squares needs the gaussian family and identity link"),
           r->status;
  return BL_OK;
}

static int
read_smearing (reader *r, bl_model *m, const json_t *root)
{
  const json_t *s = member (r, root, "smearing"), *a;
  size_t stride, i;
  json_t *v;
  if (!s)
    return r->status;
  if (m->tr == BL_TRANSFORM_NONE)
    return BL_OK;                         /* ignored without a transform */
  if (!json_is_object (s))
    return bad (r, "smearing", "expected an object"), r->status;
  if (get_size (r, s, "n", &m->smear_n) != BL_OK || get_size (r, s, "stride", &stride) != BL_OK
      || get_num (r, s, "mean_exp", 0, &m->smear_mean_exp) != BL_OK
      || get_num (r, s, "mean", 0, &m->smear_mean) != BL_OK
      || get_num (r, s, "mean_sq", 0, &m->smear_mean_sq) != BL_OK
      || get_num (r, s, "min", 0, &m->smear_min) != BL_OK
      || !(a = get_arr (r, s, "residuals", 0)))
    return r->status;
  m->nres = json_array_size (a);
  if (m->nres == 0 || stride == 0 || m->nres != (m->smear_n + stride - 1) / stride)
    return bad (r, "residuals", "the count does not match n and stride"), r->status;
  if (!(m->res = bl_mallocn (m->nres, sizeof *m->res)))
    return nomem (r), r->status;
  json_array_foreach (a, i, v)
    if (num_of (r, v, "residuals", 0, &m->res[i]) != BL_OK)
      return r->status;
  return BL_OK;
}

static int
read_coef (reader *r, bl_model *m, const json_t *root)
{
  const json_t *cols = get_arr (r, root, "columns", 0), *coef, *cov;
  size_t j, k;
  json_t *v, *row;
  if (!cols)
    return r->status;
  m->p = json_array_size (cols);
  if (m->p == 0)
    return bad (r, "columns", "the model has no columns"), r->status;
  if (m->p > BL_MODEL_MAX_COLUMNS) {    /* before the p x p covariance is allocated */
    char what[96];
    snprintf (what, sizeof what, "%zu columns, more than the limit of %d", m->p,
              BL_MODEL_MAX_COLUMNS);
    return bad (r, "columns", what), r->status;
  }
  m->labels = bl_calloc (m->p, sizeof *m->labels);
  m->beta = bl_mallocn (m->p, sizeof *m->beta);
  m->cov = bl_mallocn (m->p * m->p, sizeof *m->cov);
  if (!m->labels || !m->beta || !m->cov || m->p > SIZE_MAX / m->p)
    return nomem (r), r->status;
  json_array_foreach (cols, j, v) {
    if (!json_is_string (v))
      return bad (r, "columns", "expected an array of strings"), r->status;
    if (!(m->labels[j] = bl_strdup (json_string_value (v))))
      return nomem (r), r->status;
  }
  if (!(coef = get_arr (r, root, "coef", m->p)) || !(cov = get_arr (r, root, "cov", m->p)))
    return r->status;
  json_array_foreach (coef, j, v)
    if (num_of (r, v, "coef", 1, &m->beta[j]) != BL_OK)
      return r->status;
  json_array_foreach (cov, j, row) {
    if (!json_is_array (row) || json_array_size (row) != m->p)
      return bad (r, "cov", "expected a square array as wide as 'columns'"), r->status;
    json_array_foreach (row, k, v) {
      if (num_of (r, v, "cov", 1, &m->cov[j + k * m->p]) != BL_OK)
        return r->status;
      if (isnan (m->beta[j]) != isnan (m->beta[k]) && !isnan (m->cov[j + k * m->p]))
        return bad (r, "cov", "aliased coefficients must have null covariances"), r->status;
      if (!isnan (m->beta[j]) && !isnan (m->beta[k]) && isnan (m->cov[j + k * m->p]))
        return bad (r, "cov", "null covariance of an estimated coefficient"), r->status;
    }
  }
  return BL_OK;
}

bl_model *
bl_model_read (const char *path, bl_err *err)
{
  reader r = { path, err, BL_OK };
  json_error_t je;
  json_t *root, *v;
  bl_model *m;
  FILE *f = fopen (path, "rb");
  struct stat st;
  if (!f) {
    bl_fail (err, BL_EIO, path, "cannot open: %s", strerror (errno));
    return NULL;
  }
  /* the whole document is parsed into memory: a regular file larger than the limit is
     refused first (a stream is not sized here; its parse fails cleanly when memory does) */
  if (fstat (fileno (f), &st) == 0 && S_ISREG (st.st_mode) && st.st_size > BL_MODEL_MAX_BYTES) {
    fclose (f);
    bl_fail (err, BL_EDATA, path, "the model file is larger than %ld MiB (the limit)",
             BL_MODEL_MAX_BYTES >> 20);
    return NULL;
  }
  root = json_loadf (f, JSON_REJECT_DUPLICATES, &je);
  if (!root && ferror (f)) {
    bl_fail (err, BL_EIO, path, "read failed: %s", strerror (errno));
    fclose (f);
    return NULL;
  }
  fclose (f);
  if (!root) {
    char where[1100];
    snprintf (where, sizeof where, "%s:%d:%d", path, je.line, je.column);
    bl_fail (err, BL_EDATA, where, "not a model file: invalid JSON (%s)", je.text);
    return NULL;
  }
  if (!json_is_object (root) || !(v = json_object_get (root, "format")) || !json_is_string (v)
      || strcmp (json_string_value (v), FORMAT_NAME) != 0) {
    json_decref (root);
    bl_fail (err, BL_EDATA, path, "not a ballast model file (no \"format\": \"%s\")",
             FORMAT_NAME);
    return NULL;
  }
  v = json_object_get (root, "format_version");
  if (!v || !json_is_integer (v) || json_integer_value (v) < 1) {
    json_decref (root);
    bl_fail (err, BL_EDATA, path, "'format_version': expected a positive integer");
    return NULL;
  }
  if (json_integer_value (v) > BL_MODEL_FORMAT) {
    bl_fail (err, BL_EDATA, path, "'format_version': %lld is newer than this ballast reads "
             "(%d); use a newer ballast", (long long) json_integer_value (v), BL_MODEL_FORMAT);
    json_decref (root);
    return NULL;
  }
  m = bl_calloc (1, sizeof *m);
  if (!m || !(m->path = bl_strdup (path))) {
    nomem (&r);
    goto fail;
  }
  m->version = (int) json_integer_value (v);
  if (get_str (&r, root, "response", 0, &m->response) != BL_OK
      || get_bool (&r, root, "intercept", &m->intercept) != BL_OK
      || read_terms (&r, m, root) != BL_OK
      || get_str (&r, root, "weights", 1, &m->weights) != BL_OK
      || read_categorical (&r, m, root) != BL_OK
      || read_kinds (&r, m, root) != BL_OK
      || read_smearing (&r, m, root) != BL_OK
      || read_coef (&r, m, root) != BL_OK
      || get_num (&r, root, "dispersion", 1, &m->phi_used) != BL_OK
      || get_num (&r, root, "phi_pearson", 1, &m->phi_pearson) != BL_OK
      || get_num (&r, root, "phi_ml", 1, &m->phi_ml) != BL_OK
      || get_num (&r, root, "family_par", 1, &m->fam_par) != BL_OK
      || get_size (&r, root, "n", &m->n) != BL_OK
      || get_size (&r, root, "rank", &m->rank) != BL_OK
      || get_size (&r, root, "dof_resid", &m->dof_resid) != BL_OK
      || get_bool (&r, root, "wald_is_t", &m->wald_is_t) != BL_OK
      || get_num (&r, root, "level", 0, &m->level) != BL_OK)
    goto fail;
  if (m->fam->par_name && !(m->fam_par > 0.0)) {
    bad (&r, "family_par", "the family's parameter must be a positive number");
    goto fail;
  }
  if (!(m->level > 0.0 && m->level < 1.0)) {
    bad (&r, "level", "expected a number in (0, 1)");
    goto fail;
  }
  json_decref (root);
  return m;
fail:
  json_decref (root);
  bl_model_free (m);
  return NULL;
}

void
bl_model_table_opts (const bl_model *m, bl_table_opts *opt)
{
  opt->categorical = m->catnames;
  opt->n_categorical = m->ncat;
}

/* ---------------------------------------------------------------- accessors */

size_t bl_model_p (const bl_model *m) { return m->p; }
const char *bl_model_label (const bl_model *m, size_t j) { return j < m->p ? m->labels[j] : NULL; }
const double *bl_model_beta (const bl_model *m) { return m->beta; }
const double *bl_model_cov (const bl_model *m) { return m->cov; }
const char *bl_model_response (const bl_model *m) { return m->response; }
double bl_model_level (const bl_model *m) { return m->level; }

/* ---------------------------------------------------------------- prediction */

void
bl_prediction_free (bl_prediction *p)
{
  if (!p)
    return;
  bl_free (p->mean);
  bl_free (p->mean_lo);
  bl_free (p->mean_hi);
  bl_free (p->pred_lo);
  bl_free (p->pred_hi);
  bl_free (p->median);
  bl_free (p);
}

/* "FILE:LINE" of table row R. */
static void
row_where (const bl_table *t, size_t r, char *buf, size_t cap)
{
  snprintf (buf, cap, "%s:%zu", bl_table_source (t), bl_table_line (t, r));
}

/* The line of the first non-missing cell of categorical column J (the cell that made it
   categorical), for messages. */
static size_t
first_text_line (const bl_table *t, size_t j, size_t *row)
{
  const int32_t *codes = bl_table_codes (t, j);
  for (size_t r = 0; r < bl_table_nrows (t); r++)
    if (codes[r] >= 0) {
      *row = r;
      return bl_table_line (t, r);
    }
  *row = 0;
  return 1;
}

static int
is_model_cat (const bl_model *m, const char *name)
{
  for (size_t i = 0; i < m->ncat; i++)
    if (strcmp (m->cat[i].column, name) == 0)
      return 1;
  return 0;
}

/* Check that the column NAME, which USE needs, is in T with the model's type. */
static int
check_column (const bl_model *m, const bl_table *t, const char *name, const char *use,
              bl_err *err)
{
  const long j = bl_table_find (t, name);
  char w[1100];
  if (j < 0) {
    snprintf (w, sizeof w, "%s:1", bl_table_source (t));
    return bl_fail (err, BL_EDATA, w, "no column '%s', which the model needs (%s)", name, use);
  }
  if (is_model_cat (m, name) && bl_table_is_numeric (t, (size_t) j)) {
    snprintf (w, sizeof w, "%s:1", bl_table_source (t));
    return bl_fail (err, BL_EDATA, w, "'%s' is categorical in the model but was read as "
                    "numbers (read the table with bl_model_table_opts)", name);
  }
  if (!is_model_cat (m, name) && !bl_table_is_numeric (t, (size_t) j)) {
    size_t r;
    const size_t line = first_text_line (t, (size_t) j, &r);
    snprintf (w, sizeof w, "%s:%zu", bl_table_source (t), line);
    return bl_fail (err, BL_EDATA, w, "'%s' is numeric in the model, but this cell is not a "
                    "number: '%s'", name,
                    bl_table_level (t, (size_t) j, (size_t) bl_table_codes (t, (size_t) j)[r]));
  }
  return BL_OK;
}

static int
check_leaves (const bl_model *m, const bl_table *t, const bl_term *term, const char *use,
              bl_err *err)
{
  int status;
  if (term->kind == BL_TERM_COL)
    return check_column (m, t, term->name, use, err);
  status = check_leaves (m, t, term->a, use, err);
  if (status == BL_OK && term->b)
    status = check_leaves (m, t, term->b, use, err);
  return status;
}

/* Every column the model needs is in T, with its type. */
static int
check_columns (const bl_model *m, const bl_table *t, bl_err *err)
{
  char use[600];
  int status = BL_OK;
  for (size_t i = 0; i < bl_terms_count (m->terms) && status == BL_OK; i++) {
    const bl_term *term = bl_terms_get (m->terms, i);
    snprintf (use, sizeof use, "term '%s'", term->label);
    status = check_leaves (m, t, term, use, err);
  }
  if (status == BL_OK && m->offset) {
    snprintf (use, sizeof use, "offset '%s'", bl_terms_get (m->offset, 0)->label);
    status = check_leaves (m, t, bl_terms_get (m->offset, 0), use, err);
  }
  if (status == BL_OK && m->var_kind == BL_VARIANCE_COLUMN) {
    snprintf (use, sizeof use, "variance function '%s^K'", m->var_col);
    status = check_column (m, t, m->var_col, use, err);
  }
  /* optional columns: present ones must be numeric */
  if (status == BL_OK && m->weights && bl_table_find (t, m->weights) >= 0)
    status = check_column (m, t, m->weights, "weights", err);
  if (status == BL_OK && bl_table_find (t, m->response) >= 0)
    status = check_column (m, t, m->response, "the response, for the scores", err);
  return status;
}

/* h^-1(z) for the model's transform, before the shift is undone (as transform.c). */
static double
inverse_transform (const bl_model *m, double z)
{
  switch (m->tr) {
  case BL_TRANSFORM_LOG: return exp (z);
  case BL_TRANSFORM_SQRT: return z > 0.0 ? z * z : 0.0;
  case BL_TRANSFORM_BOXCOX:
    if (m->lambda == 0.0)
      return exp (z);
    {
      const double u = 1.0 + m->lambda * z;
      if (u <= 0.0)
        return m->lambda > 0.0 ? 0.0 : HUGE_VAL;
      return exp (log (u) / m->lambda);
    }
  default: return z;
  }
}

/* d h^-1(z) / dz, 0 outside the range of h. */
static double
inverse_transform_deriv (const bl_model *m, double z)
{
  switch (m->tr) {
  case BL_TRANSFORM_LOG: return exp (z);
  case BL_TRANSFORM_SQRT: return z > 0.0 ? 2.0 * z : 0.0;
  case BL_TRANSFORM_BOXCOX:
    if (m->lambda == 0.0)
      return exp (z);
    {
      const double u = 1.0 + m->lambda * z;       /* (1 + L z)^(1/L - 1) */
      return u > 0.0 ? exp ((1.0 / m->lambda - 1.0) * log (u)) : 0.0;
    }
  default: return 1.0;
  }
}

/*
 * Duan's smeared mean at XB and its derivative in XB, computed as bl_fit_backtransform
 * (transform.c) does: closed forms over all the fit's residuals for log
 * (exp(xb) mean(exp e)) and sqrt (xb^2 + 2 xb mean(e) + mean(e^2), when xb + e >= 0 for every
 * e), otherwise the mean over the kept residuals.
 */
static void
smeared (const bl_model *m, double xb, double *mean, double *deriv)
{
  long double s = 0.0L, ds = 0.0L;
  if (m->tr == BL_TRANSFORM_LOG) {
    *mean = exp (xb) * m->smear_mean_exp - m->shift;
    *deriv = exp (xb) * m->smear_mean_exp;
    return;
  }
  if (m->tr == BL_TRANSFORM_SQRT && xb + m->smear_min >= 0.0) {
    *mean = (double) ((long double) xb * xb + 2.0L * xb * (long double) m->smear_mean
                      + (long double) m->smear_mean_sq) - m->shift;
    *deriv = 2.0 * xb + 2.0 * m->smear_mean;
    return;
  }
  for (size_t i = 0; i < m->nres; i++) {
    s += inverse_transform (m, xb + m->res[i]);
    ds += inverse_transform_deriv (m, xb + m->res[i]);
  }
  *mean = (double) (s / (long double) m->nres) - m->shift;
  *deriv = (double) (ds / (long double) m->nres);
}

/* Smallest integer k >= 0 with CDF(k) >= P, from the start K0 (a normal approximation):
   doubling steps away from it until the answer is bracketed, then bisection over the
   integers, so that an extreme level or a large mean costs some 2 log2(k) evaluations
   rather than one per unit (the quantile's definition; common practice, no source).  The
   CDF is nondecreasing in k.  Returns HUGE_VAL when no k below UINT_MAX/2 reaches P. */
static double
discrete_quantile (double p, double k0, double (*cdf) (unsigned k, const double *par),
                   const double *par)
{
  const double kmax = (double) UINT_MAX / 2.0;
  double lo, hi, step = 1.0;   /* invariant: CDF(lo) < p <= CDF(hi), or lo = -1 */
  if (!(k0 >= 0.0))
    k0 = 0.0;
  if (k0 > kmax)
    k0 = kmax;
  k0 = floor (k0);
  if (cdf ((unsigned) k0, par) >= p) {
    hi = k0;
    lo = k0 - step;
    while (lo >= 0.0 && cdf ((unsigned) lo, par) >= p) {
      hi = lo;
      step *= 2.0;
      lo = hi - step;
    }
    if (lo < 0.0)
      lo = -1.0;
  } else {
    lo = k0;
    hi = k0 + step;
    while (cdf ((unsigned) hi, par) < p) {
      if (hi >= kmax)
        return HUGE_VAL;
      lo = hi;
      step *= 2.0;
      hi = lo + step < kmax ? lo + step : kmax;
    }
  }
  while (hi - lo > 1.0) {
    const double mid = floor (lo + (hi - lo) / 2.0);
    if (mid >= 0.0 && cdf ((unsigned) mid, par) >= p)
      hi = mid;
    else
      lo = mid;
  }
  return hi;
}

static double
poisson_cdf (unsigned k, const double *par)
{
  return gsl_cdf_poisson_P (k, par[0]);
}

static double
negbin_cdf (unsigned k, const double *par)
{
  return gsl_cdf_negative_binomial_P (k, par[0], par[1]);
}

/* Smallest k with P(X <= k) >= P for X Poisson(MU) (the CDF from GSL). */
static double
poisson_quantile (double p, double mu)
{
  double k;
  if (!(p < 1.0))
    return HUGE_VAL;          /* the level rounds 1 - alpha/2 to 1: no finite quantile */
  k = floor (mu + gsl_cdf_ugaussian_Pinv (p) * sqrt (mu));
  if (!(k < (double) UINT_MAX / 2.0))
    return k;
  return discrete_quantile (p, k, poisson_cdf, &mu);
}

/* The same for the negative binomial NB(theta, theta / (theta + mu)) (GSL's CDF). */
static double
negbin_quantile (double p, double mu, double th)
{
  const double par[2] = { th / (th + mu), th };
  double k;
  if (!(p < 1.0))
    return HUGE_VAL;
  k = floor (mu + gsl_cdf_ugaussian_Pinv (p) * sqrt (mu + mu * mu / th));
  if (!(k < (double) UINT_MAX / 2.0))
    return k;
  return discrete_quantile (p, k, negbin_cdf, par);
}

/*
 * CDF of the inverse gaussian IG(mu, lambda) (Chhikara & Folks 1989, The Inverse Gaussian
 * Distribution, eq. 2.12; Johnson, Kotz & Balakrishnan 1994, Continuous Univariate
 * Distributions 1, ch. 15):
 *   F(x) = Phi(sqrt(lambda/x) (x/mu - 1)) + exp(2 lambda/mu) Phi(-sqrt(lambda/x) (x/mu + 1)),
 * the second term as exp(2 lambda/mu + log Phi(-z)) with log Phi(-z) = log erfc(z/sqrt 2) -
 * log 2, so that it does not overflow for large lambda/mu.
 */
static double
invgauss_cdf (double x, double mu, double lambda)
{
  const double r = sqrt (lambda / x);
  const double z1 = r * (x / mu - 1.0), z2 = r * (x / mu + 1.0);
  if (x <= 0.0)
    return 0.0;
  return gsl_cdf_ugaussian_P (z1)
         + exp (2.0 * lambda / mu + gsl_sf_log_erfc (z2 / M_SQRT2) - M_LN2);
}

/* The P quantile of IG(mu, lambda) by bisection on its CDF (monotone), bracketed by
   doubling from mu. */
static double
invgauss_quantile (double p, double mu, double lambda)
{
  double lo = 0.0, hi = mu;
  for (int k = 0; k < 2000 && invgauss_cdf (hi, mu, lambda) < p; k++) {
    lo = hi;
    hi *= 2.0;
  }
  for (int k = 0; k < IG_BISECT_MAX && hi - lo > 4.0 * DBL_EPSILON * hi; k++) {
    const double mid = 0.5 * (lo + hi);
    if (invgauss_cdf (mid, mu, lambda) < p)
      lo = mid;
    else
      hi = mid;
  }
  return 0.5 * (lo + hi);
}

/* The family's (alpha/2, 1 - alpha/2) quantiles at mean MU with prior weight A. */
static void
glm_pred_interval (const bl_model *m, double mu, double a, double alpha, double *lo,
                   double *hi)
{
  const double p1 = alpha / 2.0, p2 = 1.0 - alpha / 2.0;
  if (m->fam == &bl_family_poisson) {
    *lo = poisson_quantile (p1, mu);
    *hi = poisson_quantile (p2, mu);
  } else if (m->fam == &bl_family_negbin) {
    *lo = negbin_quantile (p1, mu, m->fam_par);
    *hi = negbin_quantile (p2, mu, m->fam_par);
  } else if (m->fam == &bl_family_tweedie) {
    *lo = bl_tweedie_quantile (p1, mu, m->phi_ml / a, m->fam_par);
    *hi = bl_tweedie_quantile (p2, mu, m->phi_ml / a, m->fam_par);
  } else if (m->fam == &bl_family_gamma) {
    const double shape = a / m->phi_ml, scale = mu * m->phi_ml / a;
    *lo = gsl_cdf_gamma_Pinv (p1, shape, scale);
    *hi = gsl_cdf_gamma_Pinv (p2, shape, scale);
  } else {
    const double lambda = a / m->phi_ml;
    *lo = invgauss_quantile (p1, mu, lambda);
    *hi = invgauss_quantile (p2, mu, lambda);
  }
}

static bl_prediction *
prediction_new (size_t n)
{
  bl_prediction *p = bl_calloc (1, sizeof *p);
  if (!p)
    return NULL;
  p->n = n;
  p->mean = bl_mallocn (n ? n : 1, sizeof (double));
  p->mean_lo = bl_mallocn (n ? n : 1, sizeof (double));
  p->mean_hi = bl_mallocn (n ? n : 1, sizeof (double));
  p->pred_lo = bl_mallocn (n ? n : 1, sizeof (double));
  p->pred_hi = bl_mallocn (n ? n : 1, sizeof (double));
  p->median = bl_mallocn (n ? n : 1, sizeof (double));
  if (!p->mean || !p->mean_lo || !p->mean_hi || !p->pred_lo || !p->pred_hi || !p->median) {
    bl_prediction_free (p);
    return NULL;
  }
  p->deviance = p->rmse = p->mae = NAN;
  return p;
}

/* The new-data design for M on T: every row, in order, with the fit's columns. */
static bl_design *
new_design (const bl_model *m, const bl_table *t, bl_err *err)
{
  bl_design_opts o;
  bl_design *d;
  if (check_columns (m, t, err) != BL_OK)
    return NULL;
  bl_design_opts_init (&o);
  o.intercept = m->intercept;
  o.levels = m->dl;
  o.n_levels = m->ncat;
  o.weights = m->weights && bl_table_find (t, m->weights) >= 0 ? m->weights : NULL;
  o.offset = m->offset;
  o.variance = m->var_kind == BL_VARIANCE_COLUMN ? m->var_col : NULL;
  o.response_optional = 1;
  o.missing_error = 1;
  d = bl_design_new (t, m->response, m->terms, &o, err);
  if (!d) {
    if (err && err->code == BL_ESPEC)      /* the model is fine, so the data are at fault */
      err->code = BL_EDATA;
    return NULL;
  }
  if (bl_design_p (d) != m->p || bl_design_n (d) != bl_table_nrows (t)) {
    const size_t pd = bl_design_p (d);
    bl_design_free (d);
    bl_fail (err, BL_EDATA, m->path, "inconsistent model: its terms give %zu columns, but "
             "'columns' lists %zu", pd, m->p);
    return NULL;
  }
  for (size_t j = 0; j < m->p; j++)
    if (strcmp (bl_design_label (d, j), m->labels[j]) != 0) {
      bl_fail (err, BL_EDATA, m->path, "inconsistent model: its terms give column '%s' where "
               "'columns' has '%s'", bl_design_label (d, j), m->labels[j]);
      bl_design_free (d);
      return NULL;
    }
  return d;
}

bl_prediction *
bl_model_predict (const bl_model *m, const bl_table *t, double level, bl_err *err)
{
  const size_t p = m->p;
  bl_design *d;
  bl_prediction *pr = NULL;
  double *X = NULL, alpha, q;
  const double *off, *y, *aw, *vc;
  long double dev = 0.0L, sse = 0.0L, sae = 0.0L;
  size_t nscore = 0, n;

  if (level == 0.0 || isnan (level))
    level = m->level;
  if (!(level > 0.0 && level < 1.0)) {
    bl_fail (err, BL_ESPEC, "--level", "expected a number in (0, 1), got %g", level);
    return NULL;
  }
  alpha = 1.0 - level;
  if (!(d = new_design (m, t, err)))
    return NULL;
  n = bl_design_n (d);
  pr = prediction_new (n);
  X = bl_mallocn (BLOCK * p, sizeof *X);
  if (!pr || !X) {
    bl_fail (err, BL_ENOMEM, "predict", "out of memory for %zu predictions", n);
    goto fail;
  }
  /* q: t on dof_resid when the fit's Wald statistics are t (phi estimated), else normal. */
  q = m->wald_is_t && m->dof_resid > 0 ? gsl_cdf_tdist_Pinv (1.0 - alpha / 2.0,
                                                             (double) m->dof_resid)
                                       : gsl_cdf_ugaussian_Pinv (1.0 - alpha / 2.0);
  off = bl_design_offset (d);
  y = bl_design_y (d);
  aw = bl_design_prior_w (d);
  vc = bl_design_varcol (d);
  for (size_t r0 = 0; r0 < n; r0 += BLOCK) {
    const size_t nr = n - r0 < BLOCK ? n - r0 : BLOCK;
    bl_design_fill (d, r0, nr, X, BLOCK);
    for (size_t i = 0; i < nr; i++) {
      const size_t row = r0 + i;
      const double a = aw ? aw[row] : 1.0;
      long double xb = 0.0L, xvx = 0.0L;
      double eta, se, mu;
      char w[1100];
      for (size_t j = 0; j < p; j++)
        if (!isnan (m->beta[j]))
          xb += (long double) X[j * BLOCK + i] * m->beta[j];
      for (size_t j = 0; j < p; j++) {
        long double s = 0.0L;
        if (isnan (m->beta[j]))
          continue;
        for (size_t k = 0; k < p; k++)
          if (!isnan (m->beta[k]))
            s += (long double) m->cov[j + k * p] * X[k * BLOCK + i];
        xvx += s * X[j * BLOCK + i];
      }
      eta = (double) xb + (off ? off[row] : 0.0);
      se = xvx > 0.0L ? sqrt ((double) xvx) : 0.0;
      row_where (t, bl_design_table_row (d, row), w, sizeof w);

      if (m->tr != BL_TRANSFORM_NONE) {
        /* transformed: smeared mean, delta-method interval; interval ends mapped back */
        const double sp = sqrt (m->phi_pearson / a + se * se);
        double deriv;
        smeared (m, eta, &mu, &deriv);
        pr->mean[row] = mu;
        pr->mean_lo[row] = mu - q * fabs (deriv) * se;
        pr->mean_hi[row] = mu + q * fabs (deriv) * se;
        pr->pred_lo[row] = inverse_transform (m, eta - q * sp) - m->shift;
        pr->pred_hi[row] = inverse_transform (m, eta + q * sp) - m->shift;
        pr->median[row] = inverse_transform (m, eta) - m->shift;
      } else {
        pr->median[row] = NAN;
        const double lo = eta - q * se, hi = eta + q * se;
        double e1 = m->link->ginv (lo), e2 = m->link->ginv (hi);
        if (m->link == &bl_link_inverse && !(lo * hi > 0.0)) {
          /* the interval for 1/mu reaches 0: the one for mu is unbounded on one side */
          e1 = eta > 0.0 ? HUGE_VAL : -HUGE_VAL;
          e2 = m->link->ginv (eta > 0.0 ? hi : lo);
        }
        if (!m->link->valid_eta (eta) || !m->fam->valid_mu (mu = m->link->ginv (eta))) {
          char s[32];
          bl_format_shortest (eta, s);
          bl_fail (err, BL_EDATA, w, "the linear predictor %s gives no valid mean of the %s "
                   "family with the %s link", s, m->fam->name, m->link->name);
          goto fail;
        }
        pr->mean[row] = mu;
        pr->mean_lo[row] = e1 < e2 ? e1 : e2;
        pr->mean_hi[row] = e1 < e2 ? e2 : e1;
        if (m->fam == &bl_family_gaussian) {
          double v = 1.0;
          const double dmu = m->link->dmu_deta (eta);
          if (m->var_kind == BL_VARIANCE_COLUMN)
            v = exp (m->power * log (vc[row]));
          else if (m->var_kind == BL_VARIANCE_FITTED) {
            if (!(mu > 0.0)) {
              char s[32];
              bl_format_shortest (mu, s);
              bl_fail (err, BL_EDATA, w, "the predicted mean %s is not > 0, so the variance "
                       "function fitted^K has no value", s);
              goto fail;
            }
            v = exp (m->power * log (mu));
          }
          {
            const double sp = sqrt (m->phi_pearson * v / a + dmu * dmu * se * se);
            pr->pred_lo[row] = mu - q * sp;
            pr->pred_hi[row] = mu + q * sp;
          }
          if (y && !isnan (y[row]))
            dev += (long double) (a / v) * (y[row] - mu) * (y[row] - mu);
        } else {
          if (m->fam == &bl_family_poisson && mu > (double) UINT_MAX / 4.0) {
            bl_fail (err, BL_EDATA, w, "the predicted mean %g is too large for Poisson "
                     "quantiles", mu);
            goto fail;
          }
          glm_pred_interval (m, mu, a, alpha, &pr->pred_lo[row], &pr->pred_hi[row]);
          if (y && !isnan (y[row])) {
            if (!m->fam->y_ok (y[row])) {
              char s[32];
              bl_format_shortest (y[row], s);
              bl_fail (err, BL_EDATA, w, "'%s' value %s is outside the %s family's support "
                       "(%s)", m->response, s, m->fam->name, m->fam->support);
              goto fail;
            }
            dev += (long double) a * bl_family_dev (m->fam, y[row], mu, m->fam_par);
          }
        }
      }
      if (y && !isnan (y[row])) {
        const double e = y[row] - pr->mean[row];
        if (m->tr != BL_TRANSFORM_NONE)
          dev += (long double) a * e * e;
        sse += (long double) e * e;
        sae += fabs (e);
        nscore++;
      }
    }
  }
  if (nscore) {
    pr->has_response = 1;
    pr->n_scored = nscore;
    pr->deviance = (double) dev;
    pr->rmse = sqrt ((double) (sse / (long double) nscore));
    pr->mae = (double) (sae / (long double) nscore);
  }
  bl_free (X);
  bl_design_free (d);
  return pr;
fail:
  bl_free (X);
  bl_design_free (d);
  bl_prediction_free (pr);
  return NULL;
}

/* ---------------------------------------------------------------- CSV output */

/* One CSV field: quoted (RFC 4180, section 2) when it holds a comma, a quote or a line
   break, with quotes doubled. */
static void
put_field (FILE *out, const char *s)
{
  if (!strpbrk (s, ",\"\r\n")) {
    fputs (s, out);
    return;
  }
  fputc ('"', out);
  for (; *s; s++) {
    if (*s == '"')
      fputc ('"', out);
    fputc (*s, out);
  }
  fputc ('"', out);
}

static void
put_num (FILE *out, double x)
{
  if (isnan (x))
    return;
  if (isinf (x))
    fputs (x > 0 ? "inf" : "-inf", out);
  else
    fprintf (out, "%.17g", x == 0.0 ? 0.0 : x);
}

int
bl_prediction_write_csv (FILE *out, const bl_prediction *p, const bl_table *t,
                         const char *const *keep, size_t nkeep, bl_err *err)
{
  return bl_prediction_write_csv2 (out, p, t, keep, nkeep, 0, err);
}

int
bl_prediction_write_csv2 (FILE *out, const bl_prediction *p, const bl_table *t,
                          const char *const *keep, size_t nkeep, int median, bl_err *err)
{
  static const char *const head[] = { "row", "mean", "mean_lo", "mean_hi", "pred_lo",
                                      "pred_hi", "median" };
  const size_t nh = sizeof head / sizeof head[0] - (median ? 0 : 1);
  char w[1100];
  snprintf (w, sizeof w, "%s:1", bl_table_source (t));
  for (size_t k = 0; k < nkeep; k++) {
    if (bl_table_find (t, keep[k]) < 0)
      return bl_fail (err, BL_EDATA, w, "no column '%s' to keep", keep[k]);
    for (size_t h = 0; h < nh; h++)
      if (strcmp (keep[k], head[h]) == 0)
        return bl_fail (err, BL_EDATA, w, "cannot keep column '%s': the output has a column "
                        "of that name", keep[k]);
  }
  for (size_t h = 0; h < nh; h++)
    fprintf (out, "%s%s", h ? "," : "", head[h]);
  for (size_t k = 0; k < nkeep; k++) {
    fputc (',', out);
    put_field (out, keep[k]);
  }
  fputc ('\n', out);
  for (size_t i = 0; i < p->n; i++) {
    const double v[] = { p->mean[i], p->mean_lo[i], p->mean_hi[i], p->pred_lo[i],
                         p->pred_hi[i], p->median[i] };
    fprintf (out, "%zu", i + 1);
    for (size_t c = 0; c < nh - 1; c++) {
      fputc (',', out);
      put_num (out, v[c]);
    }
    for (size_t k = 0; k < nkeep; k++) {
      const size_t j = (size_t) bl_table_find (t, keep[k]);
      fputc (',', out);
      if (bl_table_is_numeric (t, j)) {
        put_num (out, bl_table_num (t, j)[i]);
      } else {
        const int32_t c = bl_table_codes (t, j)[i];
        if (c >= 0)
          put_field (out, bl_table_level (t, j, (size_t) c));
      }
    }
    if (fputc ('\n', out) == EOF)
      break;
  }
  if (ferror (out))
    return bl_fail (err, BL_EIO, "predict", "write failed: %s", strerror (errno));
  return BL_OK;
}
