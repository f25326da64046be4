/* job.c -- one job's settings: defaults, copies, keys set through the option table
   (options.c), the checks of the whole job, and the job's table and design (see job.h). */
#include <stdio.h>
#include <string.h>
#include "alloc.h"
#include "job.h"
#include "options.h"

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

/* A copy of SRC (NULL stays NULL) in *DST; -1 when memory runs out. */
static int
copy_str (char **dst, const char *src)
{
  *dst = src ? bl_strdup (src) : NULL;
  return src && !*dst ? -1 : 0;
}

int
bl_job_copy (bl_job *dst, const bl_job *src, bl_err *err)
{
  bl_job_clear (dst);
  *dst = *src;
  dst->data = dst->response = dst->terms = dst->weights = dst->offset = NULL;
  dst->candidates = dst->varcol = dst->against = dst->cluster = NULL;
  dst->ncat = dst->nref = 0;
  if (copy_str (&dst->data, src->data) || copy_str (&dst->response, src->response)
      || copy_str (&dst->terms, src->terms) || copy_str (&dst->weights, src->weights)
      || copy_str (&dst->offset, src->offset) || copy_str (&dst->candidates, src->candidates)
      || copy_str (&dst->varcol, src->varcol) || copy_str (&dst->against, src->against)
      || copy_str (&dst->cluster, src->cluster))
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

size_t bl_job_key_count (void) { return bl_option_count (); }

const char *
bl_job_key_name (size_t i)
{
  const bl_option *const o = bl_option_at (i);
  return o ? o->key : NULL;
}

unsigned
bl_job_key_flags (size_t i)
{
  const bl_option *const o = bl_option_at (i);
  return o ? o->flags : 0u;
}

int
bl_job_key_takes_value (size_t i)
{
  const bl_option *const o = bl_option_at (i);
  return o && o->kind != BL_OPTION_FLAG;
}

void
bl_job_key_help (size_t i, const char **group, const char **arg, const char **help)
{
  const bl_option *const o = bl_option_at (i);
  *group = o ? o->group : NULL;
  *arg = o ? o->arg : NULL;
  *help = o ? o->help : NULL;
}

int
bl_job_has_key (const char *key)
{
  return bl_option_find (key) != NULL;
}

int
bl_job_key_is_flag (const char *key)
{
  const bl_option *const o = bl_option_find (key);
  return o && o->kind == BL_OPTION_FLAG;
}

int
bl_job_set (bl_job *j, const char *key, const char *value, const char *where, bl_err *err)
{
  const bl_option *const o = bl_option_find (key);
  if (!o)
    return bl_fail (err, BL_ESPEC, where, "unknown key '%s'", key);
  if (o->kind != BL_OPTION_FLAG && !value)
    return bl_fail (err, BL_ESPEC, where, "'%s' needs a value", key);
  if (o->flags & BL_OPTION_MODEL)
    j->model_keys = 1;
  j->given[bl_option_index (o)] = 1;
  return o->set (j, o, value, where, err);
}

/* The smaller model of against: its syntax, and, when the job's terms parse (their own
   errors come from bl_job_parse_terms), each of its terms one of the job's terms (by
   canonical text) and fewer of them.  That is the nesting bl_nested_test asks of the
   columns, found before any data are read. */
static int
check_against (const bl_job *j, int single, const char *where_spec, bl_err *err)
{
  const char *const wa = where_spec ? where_spec : "--against";
  bl_terms *small, *big = NULL;
  int st = BL_OK;
  if (!single)
    return bl_fail (err, BL_ESPEC, where_spec ? where_spec : "--against", "against tests "
                    "one model: a comparison does not take it");
  if (!(small = bl_terms_parse (j->against, wa, err)))
    return err ? err->code : BL_ESPEC;
  if (j->terms && !(big = bl_terms_parse (j->terms, "--terms", NULL)))
    goto done;                   /* reported by bl_job_parse_terms */
  for (size_t i = 0; i < bl_terms_count (small); i++) {
    const char *const lab = bl_terms_get (small, i)->label;
    int found = 0;
    for (size_t k = 0; big && k < bl_terms_count (big) && !found; k++)
      found = strcmp (bl_terms_get (big, k)->label, lab) == 0;
    if (!found) {
      st = bl_fail (err, BL_ESPEC, wa, "the smaller model is not nested in the larger: its "
                    "term '%s' is not one of --terms", lab);
      goto done;
    }
  }
  if (!big || bl_terms_count (small) >= bl_terms_count (big))
    st = bl_fail (err, BL_ESPEC, wa, "the smaller model has every term of the larger: "
                  "nothing to test");
done:
  bl_terms_free (small);
  bl_terms_free (big);
  return st;
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
  if (j->fam_par_key == 't'
      && (!fo->fam || bl_family_par_kind (fo->fam) != BL_FAMPAR_THETA))
    return bl_fail (err, BL_ESPEC, W ("--theta"), "theta applies to --family "
                    "negative-binomial only");
  if (j->fam_par_key == 'p'
      && (!fo->fam || bl_family_par_kind (fo->fam) != BL_FAMPAR_POWER))
    return bl_fail (err, BL_ESPEC, W ("--power"), "power applies to --family tweedie only");
  if (fo->shift_given && fo->transform == BL_TRANSFORM_NONE)
    return bl_fail (err, BL_ESPEC, W ("--shift"), "a shift applies only with --transform");
  if (!single)
    for (size_t i = 0; i < bl_option_count (); i++) {
      const bl_option *const o = bl_option_at (i);
      if (j->given[i] && (o->flags & BL_OPTION_ESTIMATES))
        return bl_fail (err, BL_ESPEC, W ("--candidates"), "a comparison reports no "
                        "coefficients: '%s' applies to one model", o->key);
    }
  if (j->against) {
    const int st = check_against (j, single, where_spec, err);
    if (st != BL_OK)
      return st;
  }
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
  const char *const where_offset = where_spec ? where_spec : "--offset";
  int status = BL_OK;
  *terms = *offset = NULL;
  if (j->terms && !(*terms = bl_terms_parse (j->terms, where_spec ? where_spec : "--terms",
                                             err))) {
    status = err ? err->code : BL_ESPEC;
    goto done;
  }
  if (j->offset && !(*offset = bl_terms_parse (j->offset, where_offset, err))) {
    status = err ? err->code : BL_ESPEC;
    goto done;
  }
  if (*offset && bl_terms_count (*offset) != 1)
    status = bl_fail (err, BL_ESPEC, where_offset, "expected one term, got %zu",
                      bl_terms_count (*offset));
done:
  if (status != BL_OK) {
    bl_terms_free (*terms);
    bl_terms_free (*offset);
    *terms = *offset = NULL;
  }
  return status;
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
  int status = BL_OK;
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
  if (!(*table = bl_table_read (j->data, &to, err))) {
    status = err ? err->code : BL_EIO;
    goto done;
  }
  bl_job_design_opts (j, offset, &dopt);
  if (!(*design = bl_design_new (*table, j->response, terms, &dopt, err)))
    status = err ? err->code : BL_EDATA;
done:
  bl_free (keep.v);
  for (size_t k = 0; k < keep.nown; k++)
    bl_free (keep.own[k]);
  bl_terms_free (against);
  if (status != BL_OK) {
    bl_table_free (*table);
    *table = NULL;
  }
  return status;
}
