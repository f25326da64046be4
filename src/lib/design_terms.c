/* design_terms.c -- the design's terms (see design_impl.h): each term checked against the
   table, function terms evaluated once over the used rows with their domain checks (and
   shared between terms with the same label), and every term expanded into the products of
   factors that are the columns of X.  Layer: design (above table and terms). */
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "alloc.h"
#include "design_impl.h"

void
bl_dterm_collist_clear (collist *l)
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
int
bl_dterm_collist_push (build *b, collist *l, char *label, const factor *f, size_t nf,
                       const factor *g, size_t ng)
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

size_t
bl_dterm_count_leaves (const bl_term *t)
{
  if (t->kind == BL_TERM_COL)
    return 1;
  return bl_dterm_count_leaves (t->a) + (t->b ? bl_dterm_count_leaves (t->b) : 0);
}

/* Append T's column indices, left to right, to COLS (unique). */
void
bl_dterm_collect_leaves (const bl_table *t, const bl_term *term, long *cols,
                         size_t *nc)
{
  if (term->kind == BL_TERM_COL) {
    const long j = bl_table_find (t, term->name);
    for (size_t k = 0; k < *nc; k++)
      if (cols[k] == j)
        return;
    cols[(*nc)++] = j;
    return;
  }
  bl_dterm_collect_leaves (t, term->a, cols, nc);
  if (term->b)
    bl_dterm_collect_leaves (t, term->b, cols, nc);
}

int
bl_dterm_fail_categorical (build *b, size_t j, const char *where, const char *role)
{
  const char *const name = bl_table_colname (b->t, j), *text;
  size_t nlab, nnum, line, col;
  char cell[1024];
  if (!bl_table_typed_by_cells (b->t, j, &nlab, &nnum, &line, &col, &text))
    return bl_fail (b->err, BL_ESPEC, where, "'%s' is categorical (declared); %s", name, role);
  snprintf (cell, sizeof cell, "%s:%zu:%zu", bl_table_source (b->t), line, col);
  return bl_fail (b->err, BL_EDATA, cell, "'%s' is categorical: %zu of its %zu non-missing "
                  "cells are not numbers, the first '%s' here (%s); %s", name, nlab,
                  nlab + nnum, text, where, role);
}

/* Check that every column under TERM exists and that no categorical column sits under a
   function (FN, the innermost enclosing function node, or, for the offset, OFFSET set). */
int
bl_dterm_check (build *b, const bl_term *term, const bl_term *fn, int offset,
                const char *where)
{
  if (term->kind == BL_TERM_COL) {
    const long j = bl_table_find (b->t, term->name);
    if (j < 0)
      return bl_fail (b->err, BL_ESPEC, where, "no column '%s' in %s", term->name,
                      bl_table_source (b->t));
    if (!bl_table_is_numeric (b->t, (size_t) j)) {
      if (offset)
        return bl_dterm_fail_categorical (b, (size_t) j, where, "the offset must be numeric");
      if (fn) {
        static const char *const word[] = { "", "log", "sqrt", "exp", "pow", "cross" };
        char role[256];
        snprintf (role, sizeof role, "%s: %s needs a numeric argument", fn->label,
                  word[fn->kind]);
        return bl_dterm_fail_categorical (b, (size_t) j, where, role);
      }
    }
    return BL_OK;
  }
  if (term->kind != BL_TERM_CROSS)
    fn = term;
  {
    const int status = bl_dterm_check (b, term->a, fn, offset, where);
    if (status != BL_OK || !term->b)
      return status;
  }
  return bl_dterm_check (b, term->b, fn, offset, where);
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
int
bl_dterm_eval_rows (build *b, const bl_term *term, double **out)
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
  status = bl_dterm_eval_rows (b, term, &v);
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
int
bl_dterm_expand (build *b, const bl_term *term, collist *out)
{
  factor f = { F_TABLE, NULL, NULL, NULL, 0 };
  int status = BL_OK;
  if (term->kind == BL_TERM_COL) {
    const size_t j = (size_t) bl_table_find (b->t, term->name);
    if (bl_table_is_numeric (b->t, j)) {
      f.x = bl_table_num (b->t, j);
      return bl_dterm_collist_push (b, out, bl_strdup (term->label), &f, 1, NULL, 0);
    }
    f.kind = F_IND;
    f.codes = bl_table_codes (b->t, j);
    if (b->fixed[j]) {
      const bl_design_levels *fx = b->fixed[j];
      for (size_t k = 0; k < fx->nlevels && status == BL_OK; k++) {
        f.level = b->fixcode[j][k];
        status = bl_dterm_collist_push (b, out, join_label (term->label, fx->levels[k], '='),
                                        &f, 1, NULL, 0);
      }
      return status;
    }
    for (size_t k = 0; k < bl_table_nlevels (b->t, j) && status == BL_OK; k++) {
      if (!b->lev_used[j][k] || (int32_t) k == b->ref[j])
        continue;
      f.level = (int32_t) k;
      char *const label = join_label (term->label, bl_table_level (b->t, j, k), '=');
      status = bl_dterm_collist_push (b, out, label, &f, 1, NULL, 0);
    }
    return status;
  }
  if (term->kind == BL_TERM_CROSS) {
    collist la = { NULL, 0, 0 }, lb = { NULL, 0, 0 };
    status = bl_dterm_expand (b, term->a, &la);
    if (status == BL_OK)
      status = bl_dterm_expand (b, term->b, &lb);
    for (size_t i = 0; i < la.n && status == BL_OK; i++)
      for (size_t k = 0; k < lb.n && status == BL_OK; k++)
        status = bl_dterm_collist_push (b, out, join_label (la.c[i].label, lb.c[k].label, 0),
                                        la.c[i].f, la.c[i].nf, lb.c[k].f, lb.c[k].nf);
    bl_dterm_collist_clear (&la);
    bl_dterm_collist_clear (&lb);
    return status;
  }
  f.kind = F_OWNED;
  status = derived_get (b, term, &f.x, &f.xl);
  if (status != BL_OK)
    return status;
  return bl_dterm_collist_push (b, out, bl_strdup (term->label), &f, 1, NULL, 0);
}

/* A column with two or more numeric factors is multiplied out in bl_design_fill; make sure
   the product is finite in every used row where its indicators are 1. */
int
bl_dterm_check_products (build *b, const dcol *c)
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
