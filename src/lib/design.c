/* design.c -- the model's row set and the recipe for its design matrix X (see design.h).

   Each column of X is a product of factors: a numeric vector read from the table by table row
   (a plain numeric column, never copied), a numeric vector the design owns and indexes by used
   row (a function term such as log(hours), evaluated once with domain checks), or an indicator
   "categorical column C has level L".  The intercept is the empty product.  A term expands to
   a list of such products: a numeric term to one, a categorical column to one per
   non-reference level, and cross(a,b) to every product of a's list with b's list.  Filling a
   block of rows multiplies the factors out; it reads the table and allocates nothing. */
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "alloc.h"
#include "design_impl.h"

void
bl_design_opts_init (bl_design_opts *opt)
{
  opt->intercept = 1;
  opt->reference = NULL;
  opt->n_reference = 0;
  opt->weights = NULL;
  opt->variance = NULL;
  opt->offset = NULL;
  opt->levels = NULL;
  opt->n_levels = 0;
  opt->response_optional = 0;
  opt->missing_error = 0;
}


/* The table columns a design reads beyond its terms (-1: none), and the number of column
   leaves under its terms and offset (a bound on the columns that can drop a row). */
typedef struct inputs {
  long resp, wcol, vcol;
  size_t nleaves;
} inputs;

/* Specification errors first: response, terms, weights, offset, reference; fills IN.
   Returns BL_OK, or an error code with b->err filled. */
static int
check_spec (build *b, const char *response, const bl_terms *terms, const bl_design_opts *opt,
            inputs *in)
{
  bl_design *d = b->d;
  const bl_table *t = b->t;
  const size_t nterms = bl_terms_count (terms);
  int status;
  in->wcol = in->vcol = -1;
  in->nleaves = 2;
  if (!response && !opt->response_optional)
    return bl_fail (b->err, BL_ESPEC, "--response", "no response column given");
  in->resp = response ? bl_table_find (t, response) : -1;
  if (in->resp < 0 && opt->response_optional) {
    bl_free (d->response);                  /* absent: the design has no y */
    d->response = NULL;
  } else if (in->resp < 0) {
    return bl_fail (b->err, BL_ESPEC, "--response", "no column '%s' in %s", response,
                    bl_table_source (t));
  }
  if (in->resp >= 0 && !bl_table_is_numeric (t, (size_t) in->resp))
    return bl_dterm_fail_categorical (b, (size_t) in->resp, "--response",
                                      "the response must be numeric");
  for (size_t i = 0; i < nterms; i++) {
    const bl_term *term = bl_terms_get (terms, i);
    status = bl_dterm_check (b, term, NULL, 0, "--terms");
    if (status != BL_OK)
      return status;
    in->nleaves += bl_dterm_count_leaves (term);
  }
  if (opt->weights) {
    in->wcol = bl_table_find (t, opt->weights);
    if (in->wcol < 0)
      return bl_fail (b->err, BL_ESPEC, "--weights", "no column '%s' in %s", opt->weights,
                      bl_table_source (t));
    if (!bl_table_is_numeric (t, (size_t) in->wcol))
      return bl_dterm_fail_categorical (b, (size_t) in->wcol, "--weights",
                                        "weights must be numeric");
  }
  if (opt->variance) {
    in->vcol = bl_table_find (t, opt->variance);
    if (in->vcol < 0)
      return bl_fail (b->err, BL_ESPEC, "--variance", "no column '%s' in %s", opt->variance,
                      bl_table_source (t));
    if (!bl_table_is_numeric (t, (size_t) in->vcol))
      return bl_dterm_fail_categorical (b, (size_t) in->vcol, "--variance",
                                        "a variance column must be numeric");
  }
  if (opt->offset) {
    if (bl_terms_count (opt->offset) != 1)
      return bl_fail (b->err, BL_ESPEC, "--offset", "the offset must be exactly one term, "
                      "not %zu", bl_terms_count (opt->offset));
    status = bl_dterm_check (b, bl_terms_get (opt->offset, 0), NULL, 1, "--offset");
    if (status != BL_OK)
      return status;
    in->nleaves += bl_dterm_count_leaves (bl_terms_get (opt->offset, 0));
  }
  return bl_drows_parse_references (b, opt);
}

/* The used rows and the levels of the categorical columns: the columns whose missing cells
   drop a row, in the order that names the reason.  Returns BL_OK or an error code. */
static int
choose_rows (build *b, const bl_terms *terms, const bl_design_opts *opt, const inputs *in)
{
  const bl_table *t = b->t;
  const size_t nterms = bl_terms_count (terms);
  size_t ncheck = 0, nterm0, nterm1;
  long *check;
  int status;
  check = bl_mallocn (in->nleaves + 1, sizeof *check);
  if (!check)
    return oom (b);
  if (in->resp >= 0 && !opt->response_optional)
    check[ncheck++] = in->resp;
  nterm0 = ncheck;
  for (size_t i = 0; i < nterms; i++)
    bl_dterm_collect_leaves (t, bl_terms_get (terms, i), check, &ncheck);
  nterm1 = ncheck;
  if (in->wcol >= 0) {
    size_t k = 0;
    while (k < ncheck && check[k] != in->wcol)
      k++;
    if (k == ncheck)
      check[ncheck++] = in->wcol;
  }
  if (opt->offset)
    bl_dterm_collect_leaves (t, bl_terms_get (opt->offset, 0), check, &ncheck);
  if (in->vcol >= 0) {
    size_t k = 0;
    while (k < ncheck && check[k] != in->vcol)
      k++;
    if (k == ncheck)
      check[ncheck++] = in->vcol;
  }
  status = bl_drows_select (b, check, ncheck);
  if (status == BL_OK)
    status = bl_drows_choose_levels (b, check, nterm0, nterm1);
  bl_free (check);
  return status;
}

/* The vectors over the used rows: y, prior weights, the variance column, the offset.
   Returns BL_OK or an error code with b->err filled. */
static int
row_vectors (build *b, const bl_design_opts *opt, const inputs *in)
{
  bl_design *d = b->d;
  const bl_table *t = b->t;
  int status;
  if (in->resp >= 0) {
    d->y = bl_mallocn (d->n, sizeof *d->y);
    if (!d->y)
      return oom (b);
    for (size_t i = 0; i < d->n; i++)
      d->y[i] = bl_table_num (t, (size_t) in->resp)[d->rows[i]];
  }
  if (in->wcol >= 0) {
    const double *wv = bl_table_num (t, (size_t) in->wcol);
    int all_one = 1;
    for (size_t i = 0; i < d->n; i++) {
      if (!(wv[d->rows[i]] > 0.0) || !isfinite (wv[d->rows[i]])) {
        char w[1100], s[32];
        row_where (t, d->rows[i], w, sizeof w);
        bl_format_shortest (wv[d->rows[i]], s);
        return bl_fail (b->err, BL_EDATA, w, "weight %s is not %s (column '%s')", s,
                        isfinite (wv[d->rows[i]]) ? "> 0" : "finite", opt->weights);
      }
      all_one &= wv[d->rows[i]] == 1.0;
    }
    if (!all_one) {                         /* design.h: NULL when all weights are 1 */
      d->prior_w = bl_mallocn (d->n, sizeof *d->prior_w);
      if (!d->prior_w)
        return oom (b);
      for (size_t i = 0; i < d->n; i++)
        d->prior_w[i] = wv[d->rows[i]];
    }
  }
  if (in->vcol >= 0) {
    const double *vv = bl_table_num (t, (size_t) in->vcol);
    d->varcol = bl_mallocn (d->n, sizeof *d->varcol);
    if (!d->varcol)
      return oom (b);
    for (size_t i = 0; i < d->n; i++) {
      const double v = vv[d->rows[i]];
      if (!(v > 0.0)) {
        char w[1100], s[32];
        row_where (t, d->rows[i], w, sizeof w);
        bl_format_shortest (v, s);
        return bl_fail (b->err, BL_EDATA, w, "variance column '%s': value %s is not > 0",
                        opt->variance, s);
      }
      d->varcol[i] = v;
    }
  }
  if (opt->offset) {
    status = bl_dterm_eval_rows (b, bl_terms_get (opt->offset, 0), &d->offset);
    if (status != BL_OK)
      return status;
  }

  return BL_OK;
}

static int
build_design (build *b, const char *response, const bl_terms *terms, const bl_design_opts *opt)
{
  bl_design *d = b->d;
  const size_t nterms = bl_terms_count (terms);
  inputs in;
  int status;

  if ((status = check_spec (b, response, terms, opt, &in)) != BL_OK
      || (status = choose_rows (b, terms, opt, &in)) != BL_OK
      || (status = row_vectors (b, opt, &in)) != BL_OK)
    return status;

  /* The columns of X. */
  if (d->intercept) {
    status = bl_dterm_collist_push (b, &d->cols, bl_strdup ("intercept"), NULL, 0, NULL, 0);
    if (status != BL_OK)
      return status;
  }
  for (size_t i = 0; i < nterms && status == BL_OK; i++)
    status = bl_dterm_expand (b, bl_terms_get (terms, i), &d->cols);
  for (size_t j = 0; j < d->cols.n && status == BL_OK; j++)
    status = bl_dterm_check_products (b, &d->cols.c[j]);
  if (status != BL_OK)
    return status;
  if (d->cols.n == 0)
    return bl_fail (b->err, BL_ESPEC, "--terms", "the design has no columns (no intercept, "
                    "and no term gives a column)");
  return BL_OK;
}

bl_design *
bl_design_new (const bl_table *t, const char *response, const bl_terms *terms,
               const bl_design_opts *opt, bl_err *err)
{
  bl_design_opts defaults;
  build b = { NULL, t, err, NULL, NULL, NULL, NULL, NULL, NULL };
  const size_t ncols = bl_table_ncols (t);
  int status = BL_ENOMEM;
  if (!opt) {
    bl_design_opts_init (&defaults);
    opt = &defaults;
  }
  b.d = bl_calloc (1, sizeof *b.d);
  b.ref_over = bl_mallocn (ncols, sizeof *b.ref_over);
  b.lev_used = bl_calloc (ncols, sizeof *b.lev_used);
  b.ref = bl_calloc (ncols, sizeof *b.ref);
  b.opt = opt;
  b.fixcode = bl_calloc (ncols, sizeof *b.fixcode);
  b.fixed = bl_calloc (ncols, sizeof *b.fixed);
  if (b.d && response)
    b.d->response = bl_strdup (response);
  if (!b.d || !b.ref_over || !b.lev_used || !b.ref || !b.fixcode || !b.fixed
      || (response && !b.d->response)) {
    oom (&b);
  } else {
    for (size_t j = 0; j < ncols; j++)
      b.ref_over[j] = -1;
    b.d->t = t;
    b.d->intercept = opt->intercept != 0;
    b.d->nread = bl_table_nrows (t);
    status = build_design (&b, response, terms, opt);
  }
  for (size_t j = 0; b.lev_used && j < ncols; j++)
    bl_free (b.lev_used[j]);
  for (size_t j = 0; b.fixcode && j < ncols; j++)
    bl_free (b.fixcode[j]);
  bl_free (b.fixcode);
  bl_free ((void *) b.fixed);
  bl_free (b.lev_used);
  bl_free (b.ref_over);
  bl_free (b.ref);
  if (status != BL_OK) {
    bl_design_free (b.d);
    return NULL;
  }
  return b.d;
}

static void
cats_free (catinfo *c, size_t n)
{
  for (size_t i = 0; c && i < n; i++) {
    bl_free (c[i].column);
    bl_free (c[i].reference);
    for (size_t k = 0; c[i].levels && k < c[i].nlevels; k++)
      bl_free (c[i].levels[k]);
    bl_free (c[i].levels);
  }
  bl_free (c);
}

void
bl_design_free (bl_design *d)
{
  if (!d)
    return;
  bl_free (d->response);
  bl_free (d->rows);
  bl_free (d->y);
  bl_free (d->offset);
  bl_free (d->prior_w);
  bl_free (d->varcol);
  bl_dterm_collist_clear (&d->cols);
  for (size_t k = 0; k < d->nder; k++) {
    bl_free (d->der[k].label);
    bl_free (d->der[k].x);
    bl_free (d->der[k].xl);
  }
  bl_free (d->der);
  for (size_t k = 0; k < d->ndrops; k++)
    bl_free (d->drops[k].text);
  bl_free (d->drops);
  cats_free (d->cats, d->ncats);
  bl_free (d);
}

size_t bl_design_n (const bl_design *d) { return d->n; }
const bl_table *bl_design_table (const bl_design *d) { return d->t; }
size_t bl_design_p (const bl_design *d) { return d->cols.n; }
int bl_design_has_intercept (const bl_design *d) { return d->intercept; }
const char *bl_design_response (const bl_design *d) { return d->response; }
const double *bl_design_y (const bl_design *d) { return d->y; }
const double *bl_design_offset (const bl_design *d) { return d->offset; }
const double *bl_design_prior_w (const bl_design *d) { return d->prior_w; }
const double *bl_design_varcol (const bl_design *d) { return d->varcol; }
size_t bl_design_rows_read (const bl_design *d) { return d->nread; }
const char *bl_design_source (const bl_design *d) { return bl_table_source (d->t); }
size_t bl_design_ndrop (const bl_design *d) { return d->ndrops; }
size_t bl_design_ncat (const bl_design *d) { return d->ncats; }

const char *
bl_design_cat_column (const bl_design *d, size_t i)
{
  return i < d->ncats ? d->cats[i].column : NULL;
}

size_t
bl_design_cat_nlevels (const bl_design *d, size_t i)
{
  return i < d->ncats ? d->cats[i].nlevels : 0;
}

const char *
bl_design_cat_level (const bl_design *d, size_t i, size_t k)
{
  return i < d->ncats && k < d->cats[i].nlevels ? d->cats[i].levels[k] : NULL;
}

const char *
bl_design_cat_reference (const bl_design *d, size_t i)
{
  return i < d->ncats ? d->cats[i].reference : NULL;
}

const char *
bl_design_label (const bl_design *d, size_t j)
{
  return j < d->cols.n ? d->cols.c[j].label : NULL;
}

size_t
bl_design_table_row (const bl_design *d, size_t i)
{
  return d->rows[i];
}

size_t
bl_design_line (const bl_design *d, size_t i)
{
  return bl_table_line (d->t, d->rows[i]);
}

const char *
bl_design_drop_reason (const bl_design *d, size_t i, size_t *count)
{
  if (i >= d->ndrops)
    return NULL;
  if (count)
    *count = d->drops[i].count;
  return d->drops[i].text;
}
