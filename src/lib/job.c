/* job.c -- one job's settings, set key by key (see job.h). */
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "alloc.h"
#include "job.h"

static const char *const keys[] = {
  "data", "response", "terms", "no-intercept", "method", "family", "link", "weights",
  "offset", "categorical", "reference", "dispersion", "level", "se", "variance",
  "transform", "shift", "delimiter", "decimal-comma", "max-iter", "epsilon", "solver",
  "threads", "candidates", "folds", "seed", "against", "theta", "power", "cluster"
};

void
bl_job_init (bl_job *j)
{
  memset (j, 0, sizeof *j);
  j->intercept = 1;
  bl_fit_opts_init (&j->fit);
  bl_table_opts_init (&j->table);
  j->folds = BL_COMPARE_FOLDS;
  j->seed = BL_COMPARE_SEED;
}

void
bl_job_clear (bl_job *j)
{
  char **const s[] = { &j->data, &j->response, &j->terms, &j->weights, &j->offset,
                       &j->candidates, &j->varcol, &j->against, &j->cluster };
  for (size_t i = 0; i < sizeof s / sizeof s[0]; i++) {
    bl_free (*s[i]);
    *s[i] = NULL;
  }
  for (size_t i = 0; i < j->ncat; i++)
    bl_free (j->categorical[i]);
  for (size_t i = 0; i < j->nref; i++)
    bl_free (j->reference[i]);
  j->ncat = j->nref = 0;
}

static int
dup_into (char **dst, const char *src)
{
  char *c = NULL;
  if (src && !(c = bl_strdup (src)))
    return BL_ENOMEM;
  bl_free (*dst);
  *dst = c;
  return BL_OK;
}

int
bl_job_copy (bl_job *dst, const bl_job *src, bl_err *err)
{
  bl_job_clear (dst);
  *dst = *src;
  dst->data = dst->response = dst->terms = dst->weights = dst->offset = NULL;
  dst->candidates = dst->varcol = dst->against = dst->cluster = NULL;
  dst->ncat = dst->nref = 0;
  if (dup_into (&dst->data, src->data) || dup_into (&dst->response, src->response)
      || dup_into (&dst->terms, src->terms) || dup_into (&dst->weights, src->weights)
      || dup_into (&dst->offset, src->offset) || dup_into (&dst->candidates, src->candidates)
      || dup_into (&dst->varcol, src->varcol) || dup_into (&dst->against, src->against)
      || dup_into (&dst->cluster, src->cluster))
    goto nomem;
  for (size_t i = 0; i < src->ncat; i++, dst->ncat++)
    if (!(dst->categorical[i] = bl_strdup (src->categorical[i])))
      goto nomem;
  for (size_t i = 0; i < src->nref; i++, dst->nref++)
    if (!(dst->reference[i] = bl_strdup (src->reference[i])))
      goto nomem;
  dst->fit.variance_col = dst->varcol;
  dst->fit.cluster_col = dst->cluster;
  return BL_OK;
nomem:
  bl_job_clear (dst);
  return bl_fail (err, BL_ENOMEM, "job", "out of memory");
}

int
bl_job_has_key (const char *key)
{
  for (size_t i = 0; i < sizeof keys / sizeof keys[0]; i++)
    if (strcmp (key, keys[i]) == 0)
      return 1;
  return 0;
}

int
bl_job_key_is_flag (const char *key)
{
  return strcmp (key, "no-intercept") == 0 || strcmp (key, "decimal-comma") == 0;
}

static int
parse_double (const char *s, double *out)
{
  char *end;
  double v;
  if (!s || !*s)
    return -1;
  errno = 0;
  v = strtod (s, &end);
  if (end == s || *end != '\0' || errno == ERANGE || !isfinite (v))
    return -1;
  *out = v;
  return 0;
}

/* A whole integer >= MIN; 0 on success. */
static int
parse_count (const char *s, size_t min, size_t *out)
{
  char *end;
  unsigned long long v;
  if (!s || *s == '-' || *s == '+' || *s == '\0')
    return -1;
  errno = 0;
  v = strtoull (s, &end, 10);
  if (*end != '\0' || errno == ERANGE || v < min || v > (unsigned long long) SIZE_MAX)
    return -1;
  *out = (size_t) v;
  return 0;
}

static int
parse_flag (const char *v, int *out)
{
  if (!v || !strcmp (v, "yes") || !strcmp (v, "true") || !strcmp (v, "1")) {
    *out = 1;
    return 0;
  }
  if (!strcmp (v, "no") || !strcmp (v, "false") || !strcmp (v, "0")) {
    *out = 0;
    return 0;
  }
  return -1;
}

/* Split VALUE on commas into trimmed, non-empty copies appended to LIST; -1 on an empty
   entry or too many, -2 on exhaustion. */
static int
split_into (const char *value, char **list, size_t *n)
{
  const char *s = value;
  for (;;) {
    const char *comma = strchr (s, ','), *e = comma ? comma : s + strlen (s);
    char *c;
    while (s < e && *s == ' ')
      s++;
    while (e > s && e[-1] == ' ')
      e--;
    if (e == s || *n >= BL_JOB_MAX_LIST)
      return -1;
    c = bl_malloc ((size_t) (e - s) + 1);
    if (!c)
      return -2;
    memcpy (c, s, (size_t) (e - s));
    c[e - s] = '\0';
    list[(*n)++] = c;
    if (!comma)
      return 0;
    s = comma + 1;
  }
}

/* variance = COL^K | fitted^K, K a number or 'est'; COL may be in brackets. */
static int
set_variance (bl_job *j, const char *v)
{
  const char *hat = strrchr (v, '^');
  size_t len;
  char *col;
  if (!hat || hat == v || hat[1] == '\0')
    return -1;
  if (strcmp (hat + 1, "est") == 0) {
    j->fit.power_est = 1;
  } else {
    if (parse_double (hat + 1, &j->fit.power) != 0)
      return -1;
    j->fit.power_est = 0;
  }
  len = (size_t) (hat - v);
  if (len == 6 && strncmp (v, "fitted", 6) == 0) {
    j->fit.variance = BL_VARIANCE_FITTED;
    bl_free (j->varcol);
    j->varcol = NULL;
    j->fit.variance_col = NULL;
    return 0;
  }
  if (v[0] == '[') {
    if (len < 3 || v[len - 1] != ']')
      return -1;
    v++;
    len -= 2;
  }
  col = bl_malloc (len + 1);
  if (!col)
    return -2;
  memcpy (col, v, len);
  col[len] = '\0';
  bl_free (j->varcol);
  j->varcol = col;
  j->fit.variance = BL_VARIANCE_COLUMN;
  j->fit.variance_col = col;
  return 0;
}

#define BAD(...) return bl_fail (err, BL_ESPEC, where, __VA_ARGS__)
#define NOMEM() return bl_fail (err, BL_ENOMEM, where, "out of memory")

int
bl_job_set (bl_job *j, const char *key, const char *value, const char *where, bl_err *err)
{
  bl_fit_opts *fo = &j->fit;
  const char *v = value ? value : "";
  if (!bl_job_has_key (key))
    BAD ("unknown key '%s'", key);
  if (!bl_job_key_is_flag (key) && !value)
    BAD ("'%s' needs a value", key);
  if (!strcmp (key, "data") || !strcmp (key, "response") || !strcmp (key, "terms")
      || !strcmp (key, "weights") || !strcmp (key, "offset") || !strcmp (key, "against")
      || !strcmp (key, "cluster")) {
    char **dst = !strcmp (key, "data") ? &j->data : !strcmp (key, "response") ? &j->response
                 : !strcmp (key, "terms") ? &j->terms : !strcmp (key, "weights") ? &j->weights
                 : !strcmp (key, "against") ? &j->against
                 : !strcmp (key, "cluster") ? &j->cluster : &j->offset;
    if (!*v)
      BAD ("'%s' needs a value", key);
    if (dup_into (dst, v) != BL_OK)
      NOMEM ();
    j->fit.cluster_col = j->cluster;
    return BL_OK;
  }
  if (!strcmp (key, "no-intercept")) {
    int f;
    if (parse_flag (value, &f) != 0)
      BAD ("expected yes or no, got '%s'", v);
    j->intercept = !f;
    return BL_OK;
  }
  if (!strcmp (key, "decimal-comma")) {
    int f;
    if (parse_flag (value, &f) != 0)
      BAD ("expected yes or no, got '%s'", v);
    j->table.decimal_comma = f;
    return BL_OK;
  }
  if (!strcmp (key, "method")) {
    j->method_given = 1;
    j->model_keys = 1;
    if (!strcmp (v, "glm"))
      fo->method = BL_METHOD_GLM;
    else if (!strcmp (v, "ols"))
      fo->method = BL_METHOD_OLS;
    else if (!strcmp (v, "wls"))
      fo->method = BL_METHOD_WLS;
    else
      BAD ("unknown method '%s' (expected glm, ols or wls)", v);
    return BL_OK;
  }
  if (!strcmp (key, "family")) {
    j->model_keys = 1;
    if (!(fo->fam = bl_family_find (v)))
      BAD ("unknown family '%s' (expected gaussian, poisson, gamma or inverse-gaussian)", v);
    return BL_OK;
  }
  if (!strcmp (key, "link")) {
    j->model_keys = 1;
    if (!(fo->link = bl_link_find (v)))
      BAD ("unknown link '%s' (expected identity, log, inverse or sqrt)", v);
    return BL_OK;
  }
  if (!strcmp (key, "variance")) {
    const int r = set_variance (j, v);
    j->model_keys = 1;
    if (r == -2)
      NOMEM ();
    if (r != 0)
      BAD ("expected COL^K or fitted^K with K a number or 'est', got '%s'", v);
    return BL_OK;
  }
  if (!strcmp (key, "transform")) {
    j->model_keys = 1;
    fo->lambda_est = 0;
    if (!strcmp (v, "log"))
      fo->transform = BL_TRANSFORM_LOG;
    else if (!strcmp (v, "sqrt"))
      fo->transform = BL_TRANSFORM_SQRT;
    else if (!strcmp (v, "boxcox")) {
      fo->transform = BL_TRANSFORM_BOXCOX;
      fo->lambda_est = 1;
    } else if (!strncmp (v, "boxcox=", 7) && parse_double (v + 7, &fo->lambda) == 0)
      fo->transform = BL_TRANSFORM_BOXCOX;
    else
      BAD ("expected log, sqrt, boxcox or boxcox=L, got '%s'", v);
    return BL_OK;
  }
  if (!strcmp (key, "shift")) {
    j->model_keys = 1;
    if (parse_double (v, &fo->shift) != 0)
      BAD ("expected a number, got '%s'", v);
    fo->shift_given = 1;
    return BL_OK;
  }
  if (!strcmp (key, "se")) {
    static const char *const names[] = { "model", "hc0", "hc1", "hc2", "hc3", "cluster" };
    for (int k = 0; k < 6; k++)
      if (!strcmp (v, names[k])) {
        fo->se = (bl_se_kind) k;
        return BL_OK;
      }
    BAD ("expected model, hc0, hc1, hc2, hc3 or cluster, got '%s'", v);
  }
  if (!strcmp (key, "dispersion")) {
    j->model_keys = 1;
    if (!strcmp (v, "pearson"))
      fo->dispersion_pearson = 1;
    else if (!strcmp (v, "model"))
      fo->dispersion_pearson = 0;
    else
      BAD ("expected model or pearson, got '%s'", v);
    return BL_OK;
  }
  if (!strcmp (key, "categorical")) {
    char *tmp[BL_JOB_MAX_LIST];
    size_t nt = 0;
    const int r = split_into (v, tmp, &nt);
    if (r != 0) {
      for (size_t i = 0; i < nt; i++)
        bl_free (tmp[i]);
      if (r == -2)
        NOMEM ();
      BAD ("expected a comma-separated list of column names, got '%s'", v);
    }
    for (size_t i = 0; i < j->ncat; i++)
      bl_free (j->categorical[i]);
    memcpy (j->categorical, tmp, nt * sizeof tmp[0]);
    j->ncat = nt;
    return BL_OK;
  }
  if (!strcmp (key, "reference")) {
    const size_t n0 = j->nref;
    const int r = split_into (v, j->reference, &j->nref);
    int ok = r == 0;
    for (size_t i = n0; ok && i < j->nref; i++)
      ok = strchr (j->reference[i], '=') != NULL;
    if (!ok) {
      for (size_t i = n0; i < j->nref; i++)
        bl_free (j->reference[i]);
      j->nref = n0;
      if (r == -2)
        NOMEM ();
      BAD ("expected COL=LEVEL, got '%s'", v);
    }
    return BL_OK;
  }
  if (!strcmp (key, "theta")) {
    j->model_keys = 1;
    j->fam_par_key = 't';
    if (parse_double (v, &fo->fam_par) != 0 || !(fo->fam_par > 0.0))
      BAD ("expected a positive number, got '%s'", v);
    fo->fam_par_est = 0;
    return BL_OK;
  }
  if (!strcmp (key, "power")) {
    j->model_keys = 1;
    j->fam_par_key = 'p';
    if (!strcmp (v, "est")) {
      fo->fam_par_est = 1;
      return BL_OK;
    }
    if (parse_double (v, &fo->fam_par) != 0 || !(fo->fam_par > 1.0 && fo->fam_par < 2.0))
      BAD ("expected a number strictly between 1 and 2, or 'est', got '%s'", v);
    fo->fam_par_est = 0;
    return BL_OK;
  }
  if (!strcmp (key, "level")) {
    if (parse_double (v, &fo->level) != 0 || !(fo->level > 0.0 && fo->level < 1.0))
      BAD ("expected a number between 0 and 1, got '%s'", v);
    return BL_OK;
  }
  if (!strcmp (key, "delimiter")) {
    if (!strcmp (v, "\\t") || !strcmp (v, "tab"))
      j->table.delimiter = '\t';
    else if (strlen (v) == 1 && v[0] != '"' && v[0] != '\n' && v[0] != '\r')
      j->table.delimiter = v[0];
    else
      BAD ("expected one character (or 'tab'), got '%s'", v);
    return BL_OK;
  }
  if (!strcmp (key, "max-iter")) {
    if (parse_count (v, 1, &fo->irls.max_iter) != 0)
      BAD ("expected a positive integer, got '%s'", v);
    return BL_OK;
  }
  if (!strcmp (key, "epsilon")) {
    if (parse_double (v, &fo->irls.epsrel) != 0 || !(fo->irls.epsrel > 0.0))
      BAD ("expected a positive number, got '%s'", v);
    return BL_OK;
  }
  if (!strcmp (key, "solver")) {
    if (!strcmp (v, "auto"))
      fo->irls.solver = BL_SOLVER_AUTO;
    else if (!strcmp (v, "extended"))
      fo->irls.solver = BL_SOLVER_EXTENDED;
    else if (!strcmp (v, "streamed"))
      fo->irls.solver = BL_SOLVER_STREAMED;
    else
      BAD ("expected auto, extended or streamed, got '%s'", v);
    return BL_OK;
  }
  if (!strcmp (key, "threads")) {
    size_t t;
    if (parse_count (v, 1, &t) != 0 || t > 2)
      BAD ("expected 1 or 2, got '%s'", v);
    fo->irls.threads = (unsigned) t;
    j->table.threads = (unsigned) t;
    return BL_OK;
  }
  if (!strcmp (key, "candidates")) {
    if (bl_compare_check_list (v, err) != BL_OK) {
      if (err && err->code == BL_ESPEC)
        snprintf (err->where, sizeof err->where, "%s", where);
      return err ? err->code : BL_ESPEC;
    }
    if (dup_into (&j->candidates, v) != BL_OK)
      NOMEM ();
    return BL_OK;
  }
  if (!strcmp (key, "folds")) {
    size_t f;
    if (parse_count (v, 0, &f) != 0 || f == 1)
      BAD ("expected 0 or an integer >= 2, got '%s'", v);
    j->folds = f;
    return BL_OK;
  }
  /* seed */
  {
    size_t s;
    if (parse_count (v, 0, &s) != 0)
      BAD ("expected a non-negative integer, got '%s'", v);
    j->seed = (unsigned long) s;
    j->seed_given = 1;
    return BL_OK;
  }
}

int
bl_job_finish (bl_job *j, int single, const char *where_spec, bl_err *err)
{
  bl_fit_opts *fo = &j->fit;
#define W(opt) (where_spec ? where_spec : (opt))
  if (!j->response)
    return bl_fail (err, BL_ESPEC, W ("--response"), "the response column is required");
  if (!single && j->model_keys && j->candidates)
    return bl_fail (err, BL_ESPEC, W ("--candidates"), "give either candidates (a "
                    "comparison) or one model (method, family, link, variance, transform), "
                    "not both");
  if (fo->variance != BL_VARIANCE_NONE) {
    if (j->method_given && fo->method != BL_METHOD_WLS)
      return bl_fail (err, BL_ESPEC, W ("--variance"), "a variance function needs --method "
                      "wls");
    fo->method = BL_METHOD_WLS;
    fo->variance_col = j->varcol;
  }
  if (fo->method == BL_METHOD_WLS && fo->variance == BL_VARIANCE_NONE && !j->weights)
    return bl_fail (err, BL_ESPEC, W ("--method"), "wls needs --weights COL or --variance "
                    "EXPR");
  if (fo->se == BL_SE_CLUSTER && !j->cluster)
    return bl_fail (err, BL_ESPEC, W ("--se"), "cluster standard errors need --cluster COL");
  if (j->cluster && fo->se != BL_SE_CLUSTER)
    return bl_fail (err, BL_ESPEC, W ("--cluster"), "--cluster applies with --se cluster");
  if (j->fam_par_key == 't' && fo->fam != &bl_family_negbin)
    return bl_fail (err, BL_ESPEC, W ("--theta"), "theta applies to --family "
                    "negative-binomial only");
  if (j->fam_par_key == 'p' && fo->fam != &bl_family_tweedie)
    return bl_fail (err, BL_ESPEC, W ("--power"), "power applies to --family tweedie only");
  if (fo->shift_given && fo->transform == BL_TRANSFORM_NONE)
    return bl_fail (err, BL_ESPEC, W ("--shift"), "a shift applies only with --transform");
  if (fo->transform != BL_TRANSFORM_NONE && !j->method_given)
    fo->method = BL_METHOD_OLS;
  if (fo->method == BL_METHOD_OLS && fo->fam == NULL)
    fo->fam = &bl_family_gaussian;
#undef W
  return BL_OK;
}

int
bl_job_parse_terms (const bl_job *j, const char *where_spec, bl_terms **terms,
                    bl_terms **offset, bl_err *err)
{
  *terms = *offset = NULL;
  if (j->terms && !(*terms = bl_terms_parse (j->terms, where_spec ? where_spec : "--terms",
                                             err)))
    return err ? err->code : BL_ESPEC;
  if (j->offset) {
    if (!(*offset = bl_terms_parse (j->offset, where_spec ? where_spec : "--offset", err))) {
      bl_terms_free (*terms);
      *terms = NULL;
      return err ? err->code : BL_ESPEC;
    }
    if (bl_terms_count (*offset) != 1) {
      const size_t k = bl_terms_count (*offset);
      bl_terms_free (*terms);
      bl_terms_free (*offset);
      *terms = *offset = NULL;
      return bl_fail (err, BL_ESPEC, where_spec ? where_spec : "--offset",
                      "expected one term, got %zu", k);
    }
  }
  return BL_OK;
}

void
bl_job_design_opts (const bl_job *j, const bl_terms *offset, bl_design_opts *dopt)
{
  bl_design_opts_init (dopt);
  dopt->intercept = j->intercept;
  dopt->reference = (const char *const *) j->reference;
  dopt->n_reference = j->nref;
  dopt->weights = j->weights;
  dopt->offset = offset;
  dopt->variance = j->fit.variance == BL_VARIANCE_COLUMN ? j->varcol : NULL;
}

/* The list of column names being gathered for bl_table_opts.keep (borrowed strings). */
typedef struct names {
  const char **v;
  size_t n, cap;
  int nomem;
  char *own[BL_JOB_MAX_LIST];   /* copies made for the reference entries */
  size_t nown;
} names;

static void
names_add (names *l, const char *name)
{
  if (!name || l->nomem)
    return;
  for (size_t i = 0; i < l->n; i++)
    if (strcmp (l->v[i], name) == 0)
      return;
  if (l->n == l->cap) {
    const size_t cap = l->cap ? 2 * l->cap : 16;
    const char **v = bl_realloc (l->v, cap * sizeof *v);
    if (!v) {
      l->nomem = 1;
      return;
    }
    l->v = v;
    l->cap = cap;
  }
  l->v[l->n++] = name;
}

/* A reference entry COL=LEVEL names its column by the first prefix ending at an '=' that is
   a column (design.c), so every such prefix is kept. */
static void
names_of_reference (names *l, const char *ent)
{
  for (const char *p = strchr (ent, '='); p && !l->nomem; p = strchr (p + 1, '=')) {
    const size_t len = (size_t) (p - ent);   /* the prefix before this '=' */
    char *name = l->nown < BL_JOB_MAX_LIST ? bl_malloc (len + 1) : NULL;
    if (!name) {
      l->nomem = 1;           /* too many, or no memory: every column is kept */
      return;
    }
    memcpy (name, ent, len);
    name[len] = '\0';
    l->own[l->nown++] = name;
    names_add (l, name);
  }
}

static void
names_of_term (names *l, const bl_term *t)
{
  if (!t)
    return;
  if (t->kind == BL_TERM_COL)
    names_add (l, t->name);
  names_of_term (l, t->a);
  names_of_term (l, t->b);
}

static void
names_of_terms (names *l, const bl_terms *ts)
{
  for (size_t i = 0; ts && i < bl_terms_count (ts); i++)
    names_of_term (l, bl_terms_get (ts, i));
}

int
bl_job_load (const bl_job *j, const bl_terms *terms, const bl_terms *offset,
             bl_table **table, bl_design **design, bl_err *err)
{
  return bl_job_load_with (j, terms, offset, NULL, table, design, err);
}

int
bl_job_load_with (const bl_job *j, const bl_terms *terms, const bl_terms *offset,
                  const char *also, bl_table **table, bl_design **design, bl_err *err)
{
  bl_table_opts to = j->table;
  bl_design_opts dopt;
  names keep;
  bl_terms *against = NULL;
  *table = NULL;
  *design = NULL;
  memset (&keep, 0, sizeof keep);
  to.categorical = (const char *const *) j->categorical;
  to.n_categorical = j->ncat;
  /* Only the columns the job uses are kept (memory follows the model, not the file's
     width): the response, weights, variance and cluster columns, those of the terms, the
     offset and the nested model, and ALSO.  When the list cannot be made, all are kept. */
  names_add (&keep, j->response);
  names_add (&keep, j->weights);
  names_add (&keep, j->varcol);
  names_add (&keep, j->cluster);
  names_add (&keep, also);
  names_of_terms (&keep, terms);
  names_of_terms (&keep, offset);
  if (j->against && (against = bl_terms_parse (j->against, "against", NULL)) == NULL)
    keep.nomem = 1;
  names_of_terms (&keep, against);
  for (size_t k = 0; k < j->nref; k++)
    names_of_reference (&keep, j->reference[k]);
  if (!keep.nomem && keep.n > 0) {
    to.keep = keep.v;
    to.n_keep = keep.n;
  }
  *table = bl_table_read (j->data, &to, err);
  bl_free (keep.v);
  for (size_t k = 0; k < keep.nown; k++)
    bl_free (keep.own[k]);
  bl_terms_free (against);
  if (!*table)
    return err ? err->code : BL_EIO;
  bl_job_design_opts (j, offset, &dopt);
  if (!(*design = bl_design_new (*table, j->response, terms, &dopt, err))) {
    bl_table_free (*table);
    *table = NULL;
    return err ? err->code : BL_EDATA;
  }
  return BL_OK;
}
