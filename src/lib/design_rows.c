/* design_rows.c -- the design's row set (see design_impl.h): the rows a model uses, the
   dropped ones counted by their first missing column, and the levels of each categorical
   column (fixed levels, reference levels, the levels that occur in the used rows).  Layer:
   design. */
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "alloc.h"
#include "design_impl.h"

/* Parse the reference entries of OPT into b->ref_over. */
int
bl_drows_parse_references (build *b, const bl_design_opts *opt)
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
int
bl_drows_select (build *b, const long *check, size_t ncheck)
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
int
bl_drows_choose_levels (build *b, const long *check, size_t nterm0, size_t nterm1)
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
