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
#include <string.h>
#include "alloc.h"
#include "design.h"

typedef enum factor_kind {
  F_TABLE,                  /* x indexed by table row */
  F_OWNED,                  /* x indexed by used row (a derived vector the design owns) */
  F_IND                     /* 1 when codes[table row] == level, else 0 */
} factor_kind;

typedef struct factor {
  factor_kind kind;
  const double *x;
  const long double *xl;    /* F_OWNED: the same values in long double, or NULL */
  const int32_t *codes;
  int32_t level;
} factor;

typedef struct dcol {
  char *label;
  size_t nf;
  factor *f;                /* nf == 0: the intercept */
} dcol;

typedef struct collist {
  dcol *c;
  size_t n, cap;
} collist;

typedef struct derived {
  char *label;              /* the term label it was evaluated for, for sharing */
  double *x;                /* length n */
  long double *xl;          /* length n, for designs of at most BL_DESIGN_LD_ROWS rows */
} derived;

typedef struct drop {
  char *text;               /* "missing 'age'" */
  size_t count;
} drop;

typedef struct catinfo {    /* a categorical column the terms use (bl_design_cat_*) */
  char *column;
  char **levels;            /* the levels with an indicator column, in column order */
  size_t nlevels;
  char *reference;
} catinfo;

/* Code of a fixed level that the table does not hold: matches no row (not even a missing
   cell, whose code is -1). */
#define ABSENT INT32_MIN

struct bl_design {
  const bl_table *t;
  char *response;
  int intercept;
  size_t nread, n;
  size_t *rows;             /* table row of each used row */
  double *y, *offset, *prior_w, *varcol;
  collist cols;
  derived *der;
  size_t nder, dercap;
  drop *drops;
  size_t ndrops;
  catinfo *cats;
  size_t ncats;
};

/* State used only while building. */
typedef struct build {
  bl_design *d;
  const bl_table *t;
  bl_err *err;
  long *ref_over;           /* per table column: reference level from opt, or -1 */
  unsigned char **lev_used; /* per categorical term column: which levels occur in used rows */
  int32_t *ref;             /* per table column: the reference level chosen */
  const bl_design_opts *opt;
  int32_t **fixcode;        /* per table column with fixed levels: the table code of each
                               fixed level (ABSENT when the table lacks it) */
  const bl_design_levels **fixed;   /* per table column: its fixed levels, or NULL */
} build;

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

static int
oom (build *b)
{
  return bl_fail (b->err, BL_ENOMEM, bl_table_source (b->t), "out of memory building the "
                  "design");
}

/* "FILE:LINE" of table row R, for messages about a row. */
static void
row_where (const bl_table *t, size_t r, char *buf, size_t cap)
{
  snprintf (buf, cap, "%s:%zu", bl_table_source (t), bl_table_line (t, r));
}

static void
collist_clear (collist *l)
{
  for (size_t j = 0; j < l->n; j++) {
    bl_free (l->c[j].label);
    bl_free (l->c[j].f);
  }
  bl_free (l->c);
  l->c = NULL;
  l->n = l->cap = 0;
}

/* Append a column with LABEL (taken over: freed here on failure) and the NF factors at F
   followed by the NG at G (copied). */
static int
collist_push (build *b, collist *l, char *label, const factor *f, size_t nf, const factor *g,
              size_t ng)
{
  dcol *c;
  if (!label)
    return oom (b);
  if (l->n == l->cap) {
    const size_t cap = l->cap ? 2 * l->cap : 8;
    dcol *nc = bl_realloc (l->c, cap * sizeof *nc);
    if (!nc) {
      bl_free (label);
      return oom (b);
    }
    l->c = nc;
    l->cap = cap;
  }
  c = &l->c[l->n];
  c->label = label;
  c->nf = nf + ng;
  c->f = NULL;
  if (c->nf) {
    c->f = bl_mallocn (c->nf, sizeof *c->f);
    if (!c->f) {
      bl_free (label);
      return oom (b);
    }
    if (nf)
      memcpy (c->f, f, nf * sizeof *f);
    if (ng)
      memcpy (c->f + nf, g, ng * sizeof *g);
  }
  l->n++;
  return BL_OK;
}

/* A new string "A" SEP "B" (SEP = '=') or "cross(A,B)" (SEP = 0). */
static char *
join_label (const char *a, const char *b, char sep)
{
  const size_t len = strlen (a) + strlen (b) + 9;
  char *s = bl_malloc (len);
  if (!s)
    return NULL;
  if (sep)
    snprintf (s, len, "%s%c%s", a, sep, b);
  else
    snprintf (s, len, "cross(%s,%s)", a, b);
  return s;
}

static size_t
count_leaves (const bl_term *t)
{
  if (t->kind == BL_TERM_COL)
    return 1;
  return count_leaves (t->a) + (t->b ? count_leaves (t->b) : 0);
}

/* Append T's column indices, left to right, to COLS (unique). */
static void
collect_leaves (const bl_table *t, const bl_term *term, long *cols, size_t *nc)
{
  if (term->kind == BL_TERM_COL) {
    const long j = bl_table_find (t, term->name);
    for (size_t k = 0; k < *nc; k++)
      if (cols[k] == j)
        return;
    cols[(*nc)++] = j;
    return;
  }
  collect_leaves (t, term->a, cols, nc);
  if (term->b)
    collect_leaves (t, term->b, cols, nc);
}

/* Check that every column under TERM exists and that no categorical column sits under a
   function (FN, the innermost enclosing function node, or, for the offset, OFFSET set). */
static int
check_term (build *b, const bl_term *term, const bl_term *fn, int offset, const char *where)
{
  if (term->kind == BL_TERM_COL) {
    const long j = bl_table_find (b->t, term->name);
    if (j < 0)
      return bl_fail (b->err, BL_ESPEC, where, "no column '%s' in %s", term->name,
                      bl_table_source (b->t));
    if (!bl_table_is_numeric (b->t, (size_t) j)) {
      if (offset)
        return bl_fail (b->err, BL_ESPEC, where, "'%s' is categorical; the offset must be "
                        "numeric", term->name);
      if (fn) {
        static const char *const word[] = { "", "log", "sqrt", "exp", "pow", "cross" };
        return bl_fail (b->err, BL_ESPEC, where, "%s: '%s' is categorical; %s needs a numeric "
                        "argument", fn->label, term->name, word[fn->kind]);
      }
    }
    return BL_OK;
  }
  if (term->kind != BL_TERM_CROSS)
    fn = term;
  {
    const int status = check_term (b, term->a, fn, offset, where);
    if (status != BL_OK || !term->b)
      return status;
  }
  return check_term (b, term->b, fn, offset, where);
}

/* Evaluate the numeric expression TERM over the used rows into X (length n).  The argument
   of a function is evaluated first, over all rows, then the function with its domain check,
   so that a message names the innermost node that fails and the first row where it does:
   where = "FILE:LINE" and the node's label. */
static int
eval_vec (build *b, const bl_term *term, double *x)
{
  const bl_design *d = b->d;
  const size_t n = d->n;
  double *c = NULL;
  int status;
  if (term->kind == BL_TERM_COL) {
    const double *v = bl_table_num (b->t, (size_t) bl_table_find (b->t, term->name));
    for (size_t i = 0; i < n; i++)
      x[i] = v[d->rows[i]];
    return BL_OK;
  }
  status = eval_vec (b, term->a, x);
  if (status != BL_OK)
    return status;
  if (term->kind == BL_TERM_CROSS) {
    c = bl_mallocn (n, sizeof *c);
    if (!c)
      return oom (b);
    status = eval_vec (b, term->b, c);
    if (status != BL_OK) {
      bl_free (c);
      return status;
    }
  }
  for (size_t i = 0; i < n && status == BL_OK; i++) {
    const double a = x[i];
    const char *what = NULL;               /* the complaint, when the value is bad */
    char s1[32], s2[32] = "", w[1100];
    switch (term->kind) {
    case BL_TERM_LOG:
      if (a > 0.0)
        x[i] = log (a);
      else
        what = "is not > 0";
      break;
    case BL_TERM_SQRT:
      if (a >= 0.0)
        x[i] = sqrt (a);
      else
        what = "is not >= 0";
      break;
    case BL_TERM_EXP:
      x[i] = exp (a);
      if (!isfinite (x[i]))
        what = "overflows in exp";
      break;
    case BL_TERM_POW:
      x[i] = pow (a, term->k);
      if (isnan (x[i]))
        what = "is not a real number";
      else if (isinf (x[i]))
        what = a == 0.0 ? "is not finite" : "overflows";
      break;
    case BL_TERM_CROSS:
      x[i] = a * c[i];
      if (!isfinite (x[i]))
        what = "overflows";
      break;
    case BL_TERM_COL:
      break;
    }
    if (!what)
      continue;
    row_where (b->t, d->rows[i], w, sizeof w);
    bl_format_shortest (a, s1);
    if (term->kind == BL_TERM_POW)
      bl_format_shortest (term->k, s2);
    else if (term->kind == BL_TERM_CROSS)
      bl_format_shortest (c[i], s2);
    if (term->kind == BL_TERM_POW)
      status = bl_fail (b->err, BL_EDATA, w, "%s: value %s to the power %s %s", term->label,
                        s1, s2, what);
    else if (term->kind == BL_TERM_CROSS)
      status = bl_fail (b->err, BL_EDATA, w, "%s: product of %s and %s %s", term->label, s1,
                        s2, what);
    else
      status = bl_fail (b->err, BL_EDATA, w, "%s: value %s %s", term->label, s1, what);
  }
  bl_free (c);
  return status;
}

/* TERM over the used rows in long double (values already checked by eval_vec), so that the
   extended-precision solver sees pow(x,10) and log(x) without a double rounding first. */
static int
eval_ld (build *b, const bl_term *term, long double *x)
{
  const bl_design *d = b->d;
  const size_t n = d->n;
  long double *c = NULL;
  int status;
  if (term->kind == BL_TERM_COL) {
    const double *v = bl_table_num (b->t, (size_t) bl_table_find (b->t, term->name));
    for (size_t i = 0; i < n; i++)
      x[i] = v[d->rows[i]];
    return BL_OK;
  }
  status = eval_ld (b, term->a, x);
  if (status != BL_OK)
    return status;
  if (term->kind == BL_TERM_CROSS) {
    c = bl_mallocn (n, sizeof *c);
    if (!c)
      return oom (b);
    status = eval_ld (b, term->b, c);
    if (status != BL_OK) {
      bl_free (c);
      return status;
    }
  }
  for (size_t i = 0; i < n; i++)
    switch (term->kind) {
    case BL_TERM_LOG: x[i] = logl (x[i]); break;
    case BL_TERM_SQRT: x[i] = sqrtl (x[i]); break;
    case BL_TERM_EXP: x[i] = expl (x[i]); break;
    case BL_TERM_POW: x[i] = powl (x[i], (long double) term->k); break;
    case BL_TERM_CROSS: x[i] *= c[i]; break;
    case BL_TERM_COL: break;
    }
  bl_free (c);
  return BL_OK;
}

/* Evaluate TERM over the used rows into a new array in *OUT. */
static int
eval_rows (build *b, const bl_term *term, double **out)
{
  double *x = bl_mallocn (b->d->n, sizeof *x);
  int status;
  if (!x)
    return oom (b);
  status = eval_vec (b, term, x);
  if (status != BL_OK) {
    bl_free (x);
    return status;
  }
  *out = x;
  return BL_OK;
}

/* The derived vector for function term TERM, evaluated on first use and shared by label. */
static int
derived_get (build *b, const bl_term *term, const double **x, const long double **xl)
{
  bl_design *d = b->d;
  double *v;
  long double *vl = NULL;
  char *label;
  int status;
  for (size_t k = 0; k < d->nder; k++)
    if (strcmp (d->der[k].label, term->label) == 0) {
      *x = d->der[k].x;
      *xl = d->der[k].xl;
      return BL_OK;
    }
  if (d->nder == d->dercap) {
    const size_t cap = d->dercap ? 2 * d->dercap : 4;
    derived *nd = bl_realloc (d->der, cap * sizeof *nd);
    if (!nd)
      return oom (b);
    d->der = nd;
    d->dercap = cap;
  }
  label = bl_strdup (term->label);
  if (!label)
    return oom (b);
  status = eval_rows (b, term, &v);
  if (status != BL_OK) {
    bl_free (label);
    return status;
  }
  if (d->n <= BL_DESIGN_LD_ROWS) {
    vl = bl_mallocn (d->n, sizeof *vl);
    status = vl ? eval_ld (b, term, vl) : oom (b);
    if (status != BL_OK) {
      bl_free (vl);
      bl_free (v);
      bl_free (label);
      return status;
    }
  }
  d->der[d->nder].label = label;
  d->der[d->nder].x = v;
  d->der[d->nder].xl = vl;
  d->nder++;
  *x = v;
  *xl = vl;
  return BL_OK;
}

/* Append TERM's columns to OUT. */
static int
expand (build *b, const bl_term *term, collist *out)
{
  factor f = { F_TABLE, NULL, NULL, NULL, 0 };
  int status = BL_OK;
  if (term->kind == BL_TERM_COL) {
    const size_t j = (size_t) bl_table_find (b->t, term->name);
    if (bl_table_is_numeric (b->t, j)) {
      f.x = bl_table_num (b->t, j);
      return collist_push (b, out, bl_strdup (term->label), &f, 1, NULL, 0);
    }
    f.kind = F_IND;
    f.codes = bl_table_codes (b->t, j);
    if (b->fixed[j]) {
      const bl_design_levels *fx = b->fixed[j];
      for (size_t k = 0; k < fx->nlevels && status == BL_OK; k++) {
        f.level = b->fixcode[j][k];
        status = collist_push (b, out, join_label (term->label, fx->levels[k], '='), &f, 1,
                               NULL, 0);
      }
      return status;
    }
    for (size_t k = 0; k < bl_table_nlevels (b->t, j) && status == BL_OK; k++) {
      if (!b->lev_used[j][k] || (int32_t) k == b->ref[j])
        continue;
      f.level = (int32_t) k;
      status = collist_push (b, out, join_label (term->label, bl_table_level (b->t, j, k), '='),
                             &f, 1, NULL, 0);
    }
    return status;
  }
  if (term->kind == BL_TERM_CROSS) {
    collist la = { NULL, 0, 0 }, lb = { NULL, 0, 0 };
    status = expand (b, term->a, &la);
    if (status == BL_OK)
      status = expand (b, term->b, &lb);
    for (size_t i = 0; i < la.n && status == BL_OK; i++)
      for (size_t k = 0; k < lb.n && status == BL_OK; k++)
        status = collist_push (b, out, join_label (la.c[i].label, lb.c[k].label, 0),
                               la.c[i].f, la.c[i].nf, lb.c[k].f, lb.c[k].nf);
    collist_clear (&la);
    collist_clear (&lb);
    return status;
  }
  f.kind = F_OWNED;
  status = derived_get (b, term, &f.x, &f.xl);
  if (status != BL_OK)
    return status;
  return collist_push (b, out, bl_strdup (term->label), &f, 1, NULL, 0);
}

/* A column with two or more numeric factors is multiplied out in bl_design_fill; make sure
   the product is finite in every used row where its indicators are 1. */
static int
check_products (build *b, const dcol *c)
{
  const bl_design *d = b->d;
  size_t nnum = 0;
  for (size_t k = 0; k < c->nf; k++)
    nnum += c->f[k].kind != F_IND;
  if (nnum < 2)
    return BL_OK;
  for (size_t i = 0; i < d->n; i++) {
    const size_t r = d->rows[i];
    double v = 1.0;
    int on = 1;
    for (size_t k = 0; k < c->nf && on; k++) {
      const factor *f = &c->f[k];
      const double x = f->kind == F_TABLE ? f->x[r] : f->kind == F_OWNED ? f->x[i] : 1.0;
      if (f->kind == F_IND) {
        on = f->codes[r] == f->level;
        continue;
      }
      if (!isfinite (v * x)) {
        char w[1100], s1[32], s2[32];
        row_where (b->t, r, w, sizeof w);
        bl_format_shortest (v, s1);
        bl_format_shortest (x, s2);
        return bl_fail (b->err, BL_EDATA, w, "%s: product of %s and %s overflows", c->label,
                        s1, s2);
      }
      v *= x;
    }
  }
  return BL_OK;
}

/* Parse the reference entries of OPT into b->ref_over. */
static int
parse_references (build *b, const bl_design_opts *opt)
{
  const bl_table *t = b->t;
  for (size_t e = 0; e < opt->n_reference; e++) {
    const char *ent = opt->reference[e], *eq = strchr (ent, '='), *p;
    long j = -1;
    size_t k, nl;
    if (!eq || eq == ent)
      return bl_fail (b->err, BL_ESPEC, "--reference", "'%s' is not of the form COL=LEVEL",
                      ent);
    /* The column is the first prefix ending at an '=' that names a column, so that a column
       name may itself contain '='. */
    for (p = eq; p && j < 0; p = strchr (p + 1, '=')) {
      char *name = bl_malloc ((size_t) (p - ent) + 1);
      if (!name)
        return oom (b);
      memcpy (name, ent, (size_t) (p - ent));
      name[p - ent] = '\0';
      j = bl_table_find (t, name);
      bl_free (name);
      if (j >= 0)
        eq = p;
    }
    if (j < 0)
      return bl_fail (b->err, BL_ESPEC, "--reference", "no column '%.*s' in %s",
                      (int) (eq - ent), ent, bl_table_source (t));
    if (bl_table_is_numeric (t, (size_t) j))
      return bl_fail (b->err, BL_ESPEC, "--reference", "'%s' is numeric; a reference level "
                      "needs a categorical column", bl_table_colname (t, (size_t) j));
    nl = bl_table_nlevels (t, (size_t) j);
    for (k = 0; k < nl; k++)
      if (strcmp (bl_table_level (t, (size_t) j, k), eq + 1) == 0)
        break;
    if (k == nl)
      return bl_fail (b->err, BL_ESPEC, "--reference", "'%s' has no level '%s'",
                      bl_table_colname (t, (size_t) j), eq + 1);
    if (b->ref_over[j] >= 0 && b->ref_over[j] != (long) k)
      return bl_fail (b->err, BL_ESPEC, "--reference", "more than one reference level for "
                      "'%s'", bl_table_colname (t, (size_t) j));
    b->ref_over[j] = (long) k;
  }
  return BL_OK;
}

/* Choose the used rows; count the dropped ones by their first missing column in CHECK. */
static int
select_rows (build *b, const long *check, size_t ncheck)
{
  bl_design *d = b->d;
  const bl_table *t = b->t;
  size_t *count = bl_calloc (ncheck, sizeof *count);
  int status = BL_OK;
  if (!count)
    return oom (b);
  d->rows = bl_mallocn (d->nread, sizeof *d->rows);
  if (!d->rows) {
    bl_free (count);
    return oom (b);
  }
  for (size_t r = 0; r < d->nread; r++) {
    size_t k;
    for (k = 0; k < ncheck; k++) {
      const double *num = bl_table_num (t, (size_t) check[k]);
      if (num ? isnan (num[r]) : bl_table_codes (t, (size_t) check[k])[r] < 0)
        break;
    }
    if (k < ncheck && b->opt->missing_error) {
      char w[1100];
      row_where (t, r, w, sizeof w);
      bl_free (count);
      return bl_fail (b->err, BL_EDATA, w, "missing value in '%s'",
                      bl_table_colname (t, (size_t) check[k]));
    }
    if (k < ncheck)
      count[k]++;
    else
      d->rows[d->n++] = r;
  }
  for (size_t k = 0; k < ncheck; k++)
    d->ndrops += count[k] > 0;
  if (d->ndrops) {
    d->drops = bl_calloc (d->ndrops, sizeof *d->drops);
    if (!d->drops) {
      d->ndrops = 0;
      status = oom (b);
    }
  }
  for (size_t k = 0, i = 0; k < ncheck && status == BL_OK; k++) {
    const char *name = bl_table_colname (t, (size_t) check[k]);
    const size_t len = strlen (name) + 11;
    if (!count[k])
      continue;
    d->drops[i].count = count[k];
    d->drops[i].text = bl_malloc (len);
    if (!d->drops[i].text)
      status = oom (b);
    else
      snprintf (d->drops[i].text, len, "missing '%s'", name);
    i++;
  }
  bl_free (count);
  if (status == BL_OK && d->n == 0) {
    char msg[512];
    size_t len = (size_t) snprintf (msg, sizeof msg, "no rows left: %zu read", d->nread);
    for (size_t i = 0; i < d->ndrops && len < sizeof msg; i++)
      len += (size_t) snprintf (msg + len, sizeof msg - len, "%s%s: %zu",
                                i ? ", " : ", all dropped (", d->drops[i].text,
                                d->drops[i].count);
    if (d->ndrops && len < sizeof msg)
      snprintf (msg + len, sizeof msg - len, ")");
    status = bl_fail (b->err, BL_EDATA, bl_table_source (t), "%s", msg);
  }
  return status;
}

/* Append a catinfo for table column J with the NL levels at LEV (table level indices, or
   the fixed texts FX when FX is set) and reference text REF. */
static int
cat_push (build *b, size_t j, const bl_design_levels *fx, const unsigned char *used,
          int32_t ref)
{
  bl_design *d = b->d;
  const bl_table *t = b->t;
  catinfo *c, *nc = bl_realloc (d->cats, (d->ncats + 1) * sizeof *nc);
  size_t nl = 0;
  if (!nc)
    return oom (b);
  d->cats = nc;
  c = &d->cats[d->ncats++];
  memset (c, 0, sizeof *c);
  c->column = bl_strdup (bl_table_colname (t, j));
  c->reference = bl_strdup (fx ? fx->reference : bl_table_level (t, j, (size_t) ref));
  if (fx)
    nl = fx->nlevels;
  else
    for (size_t k = 0; k < bl_table_nlevels (t, j); k++)
      nl += used[k] && (int32_t) k != ref;
  c->levels = bl_calloc (nl ? nl : 1, sizeof *c->levels);
  if (!c->column || !c->reference || !c->levels)
    return oom (b);
  if (fx) {
    for (size_t k = 0; k < nl; k++)
      if (!(c->levels[c->nlevels++] = bl_strdup (fx->levels[k])))
        return oom (b);
  } else {
    for (size_t k = 0; k < bl_table_nlevels (t, j); k++)
      if (used[k] && (int32_t) k != ref
          && !(c->levels[c->nlevels++] = bl_strdup (bl_table_level (t, j, k))))
        return oom (b);
  }
  return BL_OK;
}

/* The table code of level text TEXT in column J, or ABSENT. */
static int32_t
level_code (const bl_table *t, size_t j, const char *text)
{
  for (size_t k = 0; k < bl_table_nlevels (t, j); k++)
    if (strcmp (bl_table_level (t, j, k), text) == 0)
      return (int32_t) k;
  return ABSENT;
}

/* Column J has fixed levels FX: map them to the table's codes and check that every used row
   holds one of them or the reference. */
static int
fix_levels (build *b, size_t j, const bl_design_levels *fx)
{
  const bl_table *t = b->t;
  const bl_design *d = b->d;
  const int32_t *codes = bl_table_codes (t, j);
  const size_t nl = bl_table_nlevels (t, j);
  unsigned char *known;
  if (bl_table_is_numeric (t, j))
    return bl_fail (b->err, BL_ESPEC, bl_table_source (t), "'%s' is numeric, but the design "
                    "was given its categorical levels", bl_table_colname (t, j));
  b->fixcode[j] = bl_mallocn (fx->nlevels ? fx->nlevels : 1, sizeof *b->fixcode[j]);
  known = bl_calloc (nl ? nl : 1, 1);
  if (!b->fixcode[j] || !known) {
    bl_free (known);
    return oom (b);
  }
  for (size_t k = 0; k < fx->nlevels; k++) {
    b->fixcode[j][k] = level_code (t, j, fx->levels[k]);
    if (b->fixcode[j][k] != ABSENT)
      known[b->fixcode[j][k]] = 1;
  }
  b->ref[j] = level_code (t, j, fx->reference);
  if (b->ref[j] != ABSENT)
    known[b->ref[j]] = 1;
  for (size_t i = 0; i < d->n; i++) {
    const size_t r = d->rows[i];
    if (codes[r] >= 0 && !known[codes[r]]) {
      char w[1100], list[400];
      size_t len = (size_t) snprintf (list, sizeof list, "%s", fx->reference);
      for (size_t k = 0; k < fx->nlevels && len < sizeof list; k++)
        len += (size_t) snprintf (list + len, sizeof list - len, ", %s", fx->levels[k]);
      bl_free (known);
      row_where (t, r, w, sizeof w);
      return bl_fail (b->err, BL_EDATA, w, "'%s' has level '%s', which the model does not "
                      "know (its levels: %s)", bl_table_colname (t, j),
                      bl_table_level (t, j, (size_t) codes[r]), list);
    }
  }
  bl_free (known);
  b->fixed[j] = fx;
  return cat_push (b, j, fx, NULL, b->ref[j]);
}

/* Which levels of each categorical term column occur in the used rows, and the reference;
   or the fixed levels the options give. */
static int
choose_levels (build *b, const long *check, size_t nterm0, size_t nterm1)
{
  const bl_table *t = b->t;
  const bl_design *d = b->d;
  for (size_t k = nterm0; k < nterm1; k++) {
    const size_t j = (size_t) check[k];
    const bl_design_levels *fx = NULL;
    const int32_t *codes;
    size_t nl;
    int status;
    for (size_t e = 0; e < b->opt->n_levels && !fx; e++)
      if (strcmp (b->opt->levels[e].column, bl_table_colname (t, j)) == 0)
        fx = &b->opt->levels[e];
    if (fx) {
      if (!b->fixed[j] && (status = fix_levels (b, j, fx)) != BL_OK)
        return status;
      continue;
    }
    if (bl_table_is_numeric (t, j) || b->lev_used[j])
      continue;
    codes = bl_table_codes (t, j);
    nl = bl_table_nlevels (t, j);
    b->lev_used[j] = bl_calloc (nl, 1);
    if (!b->lev_used[j])
      return oom (b);
    for (size_t i = 0; i < d->n; i++)
      b->lev_used[j][codes[d->rows[i]]] = 1;
    if (b->ref_over[j] >= 0) {
      if (!b->lev_used[j][b->ref_over[j]])
        return bl_fail (b->err, BL_ESPEC, "--reference", "level '%s' of '%s' does not occur "
                        "in the rows used", bl_table_level (t, j, (size_t) b->ref_over[j]),
                        bl_table_colname (t, j));
      b->ref[j] = (int32_t) b->ref_over[j];
    } else {
      size_t l = 0;
      while (!b->lev_used[j][l])            /* n > 0, so some level is used */
        l++;
      b->ref[j] = (int32_t) l;
    }
    if ((status = cat_push (b, j, NULL, b->lev_used[j], b->ref[j])) != BL_OK)
      return status;
  }
  return BL_OK;
}

static int
build_design (build *b, const char *response, const bl_terms *terms, const bl_design_opts *opt)
{
  bl_design *d = b->d;
  const bl_table *t = b->t;
  const size_t nterms = bl_terms_count (terms);
  long resp, wcol = -1, vcol = -1, *check;
  size_t ncheck = 0, nleaves = 2, nterm0, nterm1;
  int status;

  /* Specification errors first: response, terms, weights, offset, reference. */
  if (!response && !opt->response_optional)
    return bl_fail (b->err, BL_ESPEC, "--response", "no response column given");
  resp = response ? bl_table_find (t, response) : -1;
  if (resp < 0 && opt->response_optional) {
    bl_free (d->response);                  /* absent: the design has no y */
    d->response = NULL;
  } else if (resp < 0) {
    return bl_fail (b->err, BL_ESPEC, "--response", "no column '%s' in %s", response,
                    bl_table_source (t));
  }
  if (resp >= 0 && !bl_table_is_numeric (t, (size_t) resp))
    return bl_fail (b->err, BL_ESPEC, "--response", "'%s' is categorical; the response must "
                    "be numeric", response);
  for (size_t i = 0; i < nterms; i++) {
    const bl_term *term = bl_terms_get (terms, i);
    status = check_term (b, term, NULL, 0, "--terms");
    if (status != BL_OK)
      return status;
    nleaves += count_leaves (term);
  }
  if (opt->weights) {
    wcol = bl_table_find (t, opt->weights);
    if (wcol < 0)
      return bl_fail (b->err, BL_ESPEC, "--weights", "no column '%s' in %s", opt->weights,
                      bl_table_source (t));
    if (!bl_table_is_numeric (t, (size_t) wcol))
      return bl_fail (b->err, BL_ESPEC, "--weights", "'%s' is categorical; weights must be "
                      "numeric", opt->weights);
  }
  if (opt->variance) {
    vcol = bl_table_find (t, opt->variance);
    if (vcol < 0)
      return bl_fail (b->err, BL_ESPEC, "--variance", "no column '%s' in %s", opt->variance,
                      bl_table_source (t));
    if (!bl_table_is_numeric (t, (size_t) vcol))
      return bl_fail (b->err, BL_ESPEC, "--variance", "'%s' is categorical; a variance "
                      "column must be numeric", opt->variance);
  }
  if (opt->offset) {
    if (bl_terms_count (opt->offset) != 1)
      return bl_fail (b->err, BL_ESPEC, "--offset", "the offset must be exactly one term, "
                      "not %zu", bl_terms_count (opt->offset));
    status = check_term (b, bl_terms_get (opt->offset, 0), NULL, 1, "--offset");
    if (status != BL_OK)
      return status;
    nleaves += count_leaves (bl_terms_get (opt->offset, 0));
  }
  status = parse_references (b, opt);
  if (status != BL_OK)
    return status;

  /* The columns whose missing cells drop a row, in the order that names the reason. */
  check = bl_mallocn (nleaves + 1, sizeof *check);
  if (!check)
    return oom (b);
  if (resp >= 0 && !opt->response_optional)
    check[ncheck++] = resp;
  nterm0 = ncheck;
  for (size_t i = 0; i < nterms; i++)
    collect_leaves (t, bl_terms_get (terms, i), check, &ncheck);
  nterm1 = ncheck;
  if (wcol >= 0) {
    size_t k = 0;
    while (k < ncheck && check[k] != wcol)
      k++;
    if (k == ncheck)
      check[ncheck++] = wcol;
  }
  if (opt->offset)
    collect_leaves (t, bl_terms_get (opt->offset, 0), check, &ncheck);
  if (vcol >= 0) {
    size_t k = 0;
    while (k < ncheck && check[k] != vcol)
      k++;
    if (k == ncheck)
      check[ncheck++] = vcol;
  }
  status = select_rows (b, check, ncheck);
  if (status == BL_OK)
    status = choose_levels (b, check, nterm0, nterm1);
  bl_free (check);
  if (status != BL_OK)
    return status;

  /* The vectors over the used rows. */
  if (resp >= 0) {
    d->y = bl_mallocn (d->n, sizeof *d->y);
    if (!d->y)
      return oom (b);
    for (size_t i = 0; i < d->n; i++)
      d->y[i] = bl_table_num (t, (size_t) resp)[d->rows[i]];
  }
  if (wcol >= 0) {
    const double *wv = bl_table_num (t, (size_t) wcol);
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
  if (vcol >= 0) {
    const double *vv = bl_table_num (t, (size_t) vcol);
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
    status = eval_rows (b, bl_terms_get (opt->offset, 0), &d->offset);
    if (status != BL_OK)
      return status;
  }

  /* The columns of X. */
  if (d->intercept) {
    status = collist_push (b, &d->cols, bl_strdup ("intercept"), NULL, 0, NULL, 0);
    if (status != BL_OK)
      return status;
  }
  for (size_t i = 0; i < nterms && status == BL_OK; i++)
    status = expand (b, bl_terms_get (terms, i), &d->cols);
  for (size_t j = 0; j < d->cols.n && status == BL_OK; j++)
    status = check_products (b, &d->cols.c[j]);
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
  collist_clear (&d->cols);
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

void
bl_design_fill (const bl_design *d, size_t row0, size_t nr, double *out, size_t ld)
{
  const size_t *rows = d->rows + row0;
  /* rows [row0, row0 + nr) are table rows row0.. when no row before them was dropped */
  const int contiguous = nr > 0 && rows[nr - 1] - rows[0] == nr - 1;
  for (size_t j = 0; j < d->cols.n; j++) {
    const dcol *c = &d->cols.c[j];
    double *o = out + j * ld;
    if (c->nf == 1 && c->f[0].kind == F_TABLE && contiguous) {
      memcpy (o, c->f[0].x + rows[0], nr * sizeof *o);     /* a plain column, copied */
      continue;
    }
    if (c->nf == 1 && c->f[0].kind == F_OWNED) {
      memcpy (o, c->f[0].x + row0, nr * sizeof *o);
      continue;
    }
    for (size_t i = 0; i < nr; i++)
      o[i] = 1.0;
    for (size_t k = 0; k < c->nf; k++) {
      const factor *f = &c->f[k];
      switch (f->kind) {
      case F_TABLE:
        for (size_t i = 0; i < nr; i++)
          o[i] *= f->x[rows[i]];
        break;
      case F_OWNED:
        for (size_t i = 0; i < nr; i++)
          o[i] *= f->x[row0 + i];
        break;
      case F_IND:
        /* A select, not a product, so that 0 stays 0 whatever the other factors hold. */
        for (size_t i = 0; i < nr; i++)
          if (f->codes[rows[i]] != f->level)
            o[i] = 0.0;
        break;
      }
    }
  }
}

void
bl_design_fill_ld (const bl_design *d, size_t row0, size_t nr, long double *out, size_t ld)
{
  const size_t *rows = d->rows + row0;
  for (size_t j = 0; j < d->cols.n; j++) {
    const dcol *c = &d->cols.c[j];
    long double *o = out + j * ld;
    for (size_t i = 0; i < nr; i++)
      o[i] = 1.0L;
    for (size_t k = 0; k < c->nf; k++) {
      const factor *f = &c->f[k];
      switch (f->kind) {
      case F_TABLE:
        for (size_t i = 0; i < nr; i++)
          o[i] *= f->x[rows[i]];
        break;
      case F_OWNED:
        if (f->xl)
          for (size_t i = 0; i < nr; i++)
            o[i] *= f->xl[row0 + i];
        else
          for (size_t i = 0; i < nr; i++)
            o[i] *= f->x[row0 + i];
        break;
      case F_IND:
        for (size_t i = 0; i < nr; i++)
          if (f->codes[rows[i]] != f->level)
            o[i] = 0.0L;
        break;
      }
    }
  }
}

/* Gather SRC at the selected rows SEL (length m) into a new array, or NULL (ENOMEM); a NULL
   SRC gives NULL with *OK left set. */
static double *
gather (const double *src, const size_t *sel, size_t m, int *ok)
{
  double *x;
  if (!src)
    return NULL;
  x = bl_mallocn (m ? m : 1, sizeof *x);
  if (!x) {
    *ok = 0;
    return NULL;
  }
  for (size_t i = 0; i < m; i++)
    x[i] = src[sel[i]];
  return x;
}

bl_design *
bl_design_subset (const bl_design *d, const size_t *sel, size_t m, bl_err *err)
{
  bl_design *s = bl_calloc (1, sizeof *s);
  int ok = 1;
  if (!s)
    goto nomem;
  s->t = d->t;
  s->intercept = d->intercept;
  s->nread = d->nread;
  s->n = m;
  s->response = d->response ? bl_strdup (d->response) : NULL;
  s->rows = bl_mallocn (m ? m : 1, sizeof *s->rows);
  if ((d->response && !s->response) || !s->rows)
    goto nomem;
  if (d->ncats) {
    s->cats = bl_calloc (d->ncats, sizeof *s->cats);
    if (!s->cats)
      goto nomem;
    for (size_t i = 0; i < d->ncats; i++) {
      const catinfo *c = &d->cats[i];
      catinfo *o = &s->cats[i];
      s->ncats++;
      o->column = bl_strdup (c->column);
      o->reference = bl_strdup (c->reference);
      o->levels = bl_calloc (c->nlevels ? c->nlevels : 1, sizeof *o->levels);
      if (!o->column || !o->reference || !o->levels)
        goto nomem;
      for (size_t k = 0; k < c->nlevels; k++)
        if (!(o->levels[o->nlevels++] = bl_strdup (c->levels[k])))
          goto nomem;
    }
  }
  for (size_t i = 0; i < m; i++)
    s->rows[i] = d->rows[sel[i]];
  s->y = gather (d->y, sel, m, &ok);
  s->offset = gather (d->offset, sel, m, &ok);
  s->prior_w = gather (d->prior_w, sel, m, &ok);
  s->varcol = gather (d->varcol, sel, m, &ok);
  if (!ok)
    goto nomem;
  if (d->nder) {
    s->der = bl_calloc (d->nder, sizeof *s->der);
    if (!s->der)
      goto nomem;
    s->dercap = d->nder;
    for (size_t k = 0; k < d->nder; k++) {
      s->nder++;
      s->der[k].label = bl_strdup (d->der[k].label);
      s->der[k].x = gather (d->der[k].x, sel, m, &ok);
      if (d->der[k].xl) {
        s->der[k].xl = bl_mallocn (m ? m : 1, sizeof (long double));
        if (s->der[k].xl)
          for (size_t i = 0; i < m; i++)
            s->der[k].xl[i] = d->der[k].xl[sel[i]];
        else
          ok = 0;
      }
      if (!ok || !s->der[k].label)
        goto nomem;
    }
  }
  s->cols.c = bl_calloc (d->cols.n ? d->cols.n : 1, sizeof *s->cols.c);
  if (!s->cols.c)
    goto nomem;
  s->cols.cap = d->cols.n;
  for (size_t j = 0; j < d->cols.n; j++) {
    const dcol *c = &d->cols.c[j];
    dcol *o = &s->cols.c[j];
    s->cols.n++;
    o->label = bl_strdup (c->label);
    o->nf = c->nf;
    o->f = c->nf ? bl_mallocn (c->nf, sizeof *o->f) : NULL;
    if (!o->label || (c->nf && !o->f))
      goto nomem;
    for (size_t k = 0; k < c->nf; k++) {
      o->f[k] = c->f[k];
      if (c->f[k].kind == F_OWNED)          /* point at the gathered copy */
        for (size_t q = 0; q < d->nder; q++)
          if (d->der[q].x == c->f[k].x) {
            o->f[k].x = s->der[q].x;
            o->f[k].xl = s->der[q].xl;
          }
    }
  }
  return s;
nomem:
  bl_design_free (s);
  bl_fail (err, BL_ENOMEM, "design", "out of memory for a subset of %zu rows", m);
  return NULL;
}
