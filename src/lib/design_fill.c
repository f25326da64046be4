/* design_fill.c -- the design matrix X filled one block of rows at a time (double and long
   double), and designs restricted to a subset of rows (see design.h).  Filling multiplies
   the factors out; it reads the table and allocates nothing.  Layer: design. */
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "alloc.h"
#include "design_impl.h"

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

