/* io_record.c -- the reader's record layer: RFC 4180 records located in the buffer (quotes,
   line ends, NUL bytes checked), then each field converted into its typed column (numbers,
   missing markers, levels), with the one-pass form for the common record and the loop over
   the complete records of a buffer.  Nothing is converted before a record is known to be
   complete, so the buffer may be rewritten in place during conversion (unescaping "" and
   terminating numbers for strtod).  Layer: io (uses io_scan.h, io_intern.c and the column
   storage of table.c). */
#include <errno.h>
#include <float.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "alloc.h"
#include "io_reader.h"
#include "io_scan.h"

int
bl_io_fail_at (const reader *rd, bl_err *err, size_t line, size_t col, const char *msg)
{
  char where[1024];
  if (col)
    snprintf (where, sizeof where, "%s:%zu:%zu", rd->name, line, col);
  else
    snprintf (where, sizeof where, "%s:%zu", rd->name, line);
  return bl_fail (err, BL_EDATA, where, "%s", msg);
}

int
bl_io_fail_nomem (const reader *rd, bl_err *err)
{
  return bl_fail (err, BL_ENOMEM, rd->name, "out of memory reading the table");
}

/* Remove the second quote of every "" pair in place; returns the new length. */
size_t
bl_io_unescape (char *s, size_t n)
{
  size_t r = 0, w = 0;
  while (r < n) {
    if (s[r] == '"')
      r++;                      /* the parser checked that another quote follows */
    s[w++] = s[r++];
  }
  return w;
}


/* The line end at *P (a '\n', or '\r' that must precede '\n').  Returns REC_DONE and moves
   *P past it, REC_MORE when the buffer ends after '\r', or REC_ERR. */
static int
line_end (const reader *rd, char **pp, char *end, size_t line, size_t col, bl_err *err)
{
  char *p = *pp;
  if (*p == '\n') {
    *pp = p + 1;
    return REC_DONE;
  }
  if (p + 1 == end && !rd->eof)
    return REC_MORE;
  if (p + 1 < end && p[1] == '\n') {
    *pp = p + 2;
    return REC_DONE;
  }
  bl_io_fail_at (rd, err, line, col, "carriage return not followed by a line feed");
  return REC_ERR;
}

/* The quoted field F (field NF of its record) whose opening quote is at *PP: RFC 4180
   section 2, rules 5-7: a quoted field may hold delimiters, line breaks and quotes, each
   quote doubled.  On REC_DONE, F holds the field, *PP points past the closing quote and *LN
   has moved past the line feeds inside.  REC_MORE: the buffer ends before the field does
   and more input exists.  REC_ERR: ERR is filled. */
static int
quoted_field (const reader *rd, field *f, char **pp, char *end, size_t *ln, size_t nf,
              bl_err *err)
{
  char *q = f->s = *pp + 1, *e;
  for (;;) {
    e = memchr (q, '"', (size_t) (end - q));
    if (!e) {
      if (!rd->eof)
        return REC_MORE;
      bl_io_fail_at (rd, err, f->line, nf, "quoted field is never closed (quote opened here)");
      return REC_ERR;
    }
    if (e + 1 == end && !rd->eof)
      return REC_MORE;          /* cannot tell "" from a closing quote yet */
    if (e + 1 < end && e[1] == '"') {
      f->dquote = 1;
      q = e + 2;
      continue;
    }
    break;
  }
  f->n = (size_t) (e - f->s);
  for (q = f->s; q < e; q++) {
    if (*q == '\n')
      (*ln)++;
    else if (*q == '\0') {
      bl_io_fail_at (rd, err, *ln, nf, "NUL byte in the input");
      return REC_ERR;
    }
  }
  *pp = e + 1;
  return REC_DONE;
}

/* Byte C follows the closing quote of field NF on line LN, and is neither a delimiter nor a
   line end: ERR says what it is.  Returns REC_ERR. */
static int
after_quote (const reader *rd, bl_err *err, size_t ln, size_t nf, int c)
{
  char msg[96];
  if (c == '\0')
    snprintf (msg, sizeof msg, "NUL byte in the input");
  else if (c >= 0x20 && c < 0x7f)
    snprintf (msg, sizeof msg, "unexpected '%c' after a closing quote", c);
  else
    snprintf (msg, sizeof msg, "unexpected byte 0x%02x after a closing quote",
              (unsigned) (unsigned char) c);
  bl_io_fail_at (rd, err, ln, nf, msg);
  return REC_ERR;
}

/* Locate the fields of the record at *PP.  On REC_DONE, *NF is the field count, *PP points
   past the record and *LINE is the line after it.  REC_MORE: the buffer ends inside the
   record and more input exists (nothing changed).  REC_ERR: ERR is filled. */
int
bl_io_parse_record (reader *rd, char **pp, size_t *line, size_t *nf_out, bl_err *err)
{
  char *p = *pp;
  char *const end = rd->buf + rd->len;
  const char delim = rd->delim;
  size_t ln = *line, nf = 0;
  for (;;) {
    field *f;
    int c, r;
    if (nf < rd->fmax) {
      if (nf == BL_TABLE_MAX_COLS) {    /* only the header is read with fmax unbounded */
        char msg[96];
        snprintf (msg, sizeof msg, "the header has more than %d columns (the limit)",
                  BL_TABLE_MAX_COLS);
        bl_io_fail_at (rd, err, ln, 0, msg);
        return REC_ERR;
      }
      if (nf == rd->fcap) {
        const size_t cap = rd->fcap ? 2 * rd->fcap : 64;
        field *nfs = bl_realloc (rd->f, cap * sizeof *nfs);
        if (!nfs) {
          bl_io_fail_nomem (rd, err);
          return REC_ERR;
        }
        rd->f = nfs;
        rd->fcap = cap;
      }
      f = &rd->f[nf];
    } else
      f = &rd->spare;
    nf++;
    f->line = ln;
    f->dquote = 0;
    if (p < end && *p == '"') {
      /* a quoted field (RFC 4180 section 2, rules 5-7; quoted_field) */
      if ((r = quoted_field (rd, f, &p, end, &ln, nf, err)) != REC_DONE)
        return r;
      if (p == end)
        break;                  /* eof: the last record ends here */
      c = *p;
      if (c == delim) {
        p++;
        continue;
      }
      if (c == '\n' || c == '\r') {
        r = line_end (rd, &p, end, ln, nf, err);
        if (r != REC_DONE)
          return r;
        ln++;
        break;
      }
      return after_quote (rd, err, ln, nf, c);
    }
    f->s = p;
    while (p < end && !rd->stop[(unsigned char) *p])
      p++;
    f->n = (size_t) (p - f->s);
    if (p == end) {
      if (!rd->eof)
        return REC_MORE;
      break;
    }
    c = *p;
    if (c == delim) {
      p++;
      continue;
    }
    if (c == '\0') {
      bl_io_fail_at (rd, err, ln, nf, "NUL byte in the input");
      return REC_ERR;
    }
    r = line_end (rd, &p, end, ln, nf, err);
    if (r != REC_DONE)
      return r;
    ln++;
    break;
  }
  *pp = p;
  *line = ln;
  *nf_out = nf;
  return REC_DONE;
}

/* strtod stopped before the end of a cell the scanner took: the C library does not read
   numbers in the C locale.  BL_EINTERNAL, at once. */
int
bl_io_fail_locale (const reader *rd, const field *f, size_t j, bl_err *err)
{
  char where[1024];
  snprintf (where, sizeof where, "%s:%zu:%zu", rd->name, f->line, j + 1);
  return bl_fail (err, BL_EINTERNAL, where, "strtod stopped early (LC_NUMERIC is not the "
                  "C locale?)");
}

/* Intern the text S (N bytes) of column J's cell F as a level of column C and store its
   code at row t->nrows.  A declared column past max_levels is an error at once (its type is
   known); an undeclared one records the first cell past the limit and goes on, since the
   column may still turn out numeric (the error then depends on its type: decide_types). */
static int
cat_cell (reader *rd, bl_table *t, column *c, size_t j, const field *f, const char *s,
          size_t n, bl_err *err)
{
  size_t idx;
  int r;
  if (c->over_line) {           /* past the limit: no more texts are kept */
    c->codes[t->nrows] = -1;
    return BL_OK;
  }
  r = bl_io_dict_intern (&c->lev, s, n, rd->max_levels, &idx);
  if (r < 0)
    return bl_io_fail_nomem (rd, err);
  if (r == 2) {
    if (c->forced)
      return bl_io_fail_levels (rd, t, j, f->line, j + 1, err);
    c->over_line = f->line;
    c->over_col = j + 1;
    c->codes[t->nrows] = -1;
    return BL_OK;
  }
  c->codes[t->nrows] = (int32_t) idx;
  return BL_OK;
}

int
bl_io_fail_levels (const reader *rd, const bl_table *t, size_t j, size_t line, size_t col,
                   bl_err *err)
{
  char where[1024];
  snprintf (where, sizeof where, "%s:%zu:%zu", rd->name, line, col);
  return bl_fail (err, BL_EDATA, where,
                  "column '%s' has more than %zu distinct levels (the max_levels limit)",
                  t->names.str[j], rd->max_levels);
}

/* The error for the first non-number cell of column J, which the majority rule made
   numeric (NNUM of its NNUM + nbad non-missing cells are numbers). */
int
bl_io_fail_bad (const reader *rd, const bl_table *t, size_t j, size_t nnum, bl_err *err)
{
  const column *c = &t->cols[j];
  const bad_cell *b = &c->bad;
  const char *const name = t->names.str[j];
  const char *const cut = b->len > CELL_QUOTE_MAX ? "..." : "";
  char where[1024], why[160];
  snprintf (where, sizeof where, "%s:%zu:%zu", rd->name, b->line, b->col);
  snprintf (why, sizeof why, "%zu of its %zu non-missing cells are numbers", nnum,
            nnum + c->nbad);
  if (b->kind == BAD_OVERFLOW)
    return bl_fail (err, BL_EDATA, where, "value '%s%s' overflows a double in column '%s' "
                    "(%s)", b->text, cut, name, why);
  if (b->kind == BAD_SPECIAL)
    return bl_fail (err, BL_EDATA, where, "not a decimal number: '%s%s' in column '%s' (%s; "
                    "hex, infinity and nan forms are refused; --categorical %s for a column "
                    "meant as labels)", b->text, cut, name, why, name);
  return bl_fail (err, BL_EDATA, where, "not a number: '%s%s' in column '%s' (%s; "
                  "--categorical %s for a column meant as labels)", b->text, cut, name, why,
                  name);
}

/* Whether the trimmed cell V (M bytes) is a number, as parse_number says, with the cell left
   as written (parse_number may end it with a NUL for strtod and write '.' for the decimal
   mark; both are undone, so that the text can still become a level or a message). */
static int
cell_number (const reader *rd, char *v, size_t m, double *x)
{
  const char save = v[m];
  const int st = parse_number (v, m, rd->mark, x, NULL, 0);
  v[m] = save;
  if (rd->mark != '.' && st != NUM_NOT)
    for (size_t k = 0; k < m; k++)
      if (v[k] == '.')
        v[k] = rd->mark;
  return st;
}

/* Count the non-number cell V (M bytes, trimmed; parse status ST) of column J, keeping the
   first one's place, reason and text. */
static void
note_bad (const reader *rd, column *c, size_t j, const field *f, char *v, size_t m, int st)
{
  if (c->nbad++ == 0) {
    bad_cell *b = &c->bad;
    const size_t k = m < CELL_QUOTE_MAX ? m : CELL_QUOTE_MAX;
    b->line = f->line;
    b->col = j + 1;
    b->len = m;
    memcpy (b->text, v, k);
    b->text[k] = '\0';
    if (st == NUM_OVERFLOW)
      b->kind = BAD_OVERFLOW;
    else {
      const char save = v[m];
      b->kind = bl_io_strtod_would_take (v, m) ? BAD_SPECIAL : BAD_NOT;
      v[m] = save;
    }
  }
  (void) rd;
}

/* Column C (now NUM or CAT) has met its first cell of the other kind: it becomes MIX, with
   both arrays (the new one covering every reserved row, so that rows a worker of a parallel
   step fills in the old array alone read as numbers or as texts not kept). */
static int
make_mix (bl_table *t, column *c)
{
  const size_t cap = t->cap ? t->cap : 1;
  if (c->type == COL_NUM) {
    c->codes = bl_mallocn (cap, sizeof *c->codes);
    if (!c->codes)
      return BL_ENOMEM;
    for (size_t i = 0; i < cap; i++)
      c->codes[i] = -1;
    c->texts = 0;               /* the numbers so far were kept as doubles only */
  } else {
    c->num = bl_mallocn (cap, sizeof *c->num);
    if (!c->num)
      return BL_ENOMEM;
    for (size_t i = 0; i < cap; i++)
      c->num[i] = NAN;
    c->texts = 1;
  }
  c->type = COL_MIX;
  return BL_OK;
}

/* Convert field F (its "" pairs still doubled) into column J at row t->nrows.  The
   parallel merge calls this too, for the cells a worker could not convert on its own.

   Every cell is classified as missing, a number or not a number (a label or a typo), and
   counted; the column's type is decided only after the last row by the majority rule
   (table.c, decide_types), so that where a bad cell stands changes nothing.  Until then a
   column that has held only numbers keeps doubles, one that has held only labels keeps
   level codes, and one that has held both (MIX) keeps both arrays. */
int
bl_io_put_cell (reader *rd, bl_table *t, size_t j, const field *f, bl_err *err)
{
  const size_t r = t->nrows;
  column *c = &t->cols[j];
  char *s = f->s, *v;
  const size_t n = f->dquote ? bl_io_unescape (s, f->n) : f->n;
  size_t m;
  double x = NAN;
  int st;
  if (c->type == COL_SKIP)
    return BL_OK;               /* not kept: neither stored nor checked */
  /* Blanks around a cell are ignored for numbers and missing markers; a categorical
     level keeps its exact text. */
  v = s;
  m = n;
  while (m && is_blank (*v))
    v++, m--;
  while (m && is_blank (v[m - 1]))
    m--;
  if (is_missing (v, m)) {
    if (c->num)
      c->num[r] = NAN;
    if (c->codes)
      c->codes[r] = -1;
    return BL_OK;
  }
  if (c->forced)
    return cat_cell (rd, t, c, j, f, s, n, err);
  if (c->type == COL_NUM) {
    st = parse_number (v, m, rd->mark, &x, NULL, 0);   /* a number's text is not kept */
    if (st == NUM_OK) {
      c->num[r] = x;
      return BL_OK;
    }
    if (st == NUM_LOCALE)
      return bl_io_fail_locale (rd, f, j, err);
    if (st == NUM_OVERFLOW && rd->mark != '.')   /* show the cell as written */
      for (size_t k = 0; k < m; k++)
        if (v[k] == '.')
          v[k] = rd->mark;
    note_bad (rd, c, j, f, v, m, st);
    if (make_mix (t, c) != BL_OK)
      return bl_io_fail_nomem (rd, err);
    c->num[r] = NAN;
    c->codes[r] = -1;
    return BL_OK;
  }
  st = cell_number (rd, v, m, &x);
  if (st == NUM_LOCALE)
    return bl_io_fail_locale (rd, f, j, err);
  if (c->type == COL_UNDECIDED) {
    if (bl_io_decide (t, c, st == NUM_OK ? COL_NUM : COL_CAT) != BL_OK)
      return bl_io_fail_nomem (rd, err);
    c->texts = 1;
    if (st == NUM_OK) {
      c->num[r] = x;
      return BL_OK;
    }
  } else if (c->type == COL_CAT && st == NUM_OK && make_mix (t, c) != BL_OK)
    return bl_io_fail_nomem (rd, err);
  if (st != NUM_OK)
    note_bad (rd, c, j, f, v, m, st);
  if (c->num)
    c->num[r] = st == NUM_OK ? x : NAN;
  if (!c->texts) {
    c->codes[r] = -1;
    return BL_OK;
  }
  return cat_cell (rd, t, c, j, f, s, n, err);
}

/* The common record in one pass (the general path reads every byte twice: once to find the
   cells, once to convert them).  Taken when every column's type is known, no cell is quoted,
   every cell of a NUM column is empty or a number that parse_number converts by its fast
   path, and the record has NC cells and ends in a line end inside the buffer: then row
   t->nrows is written as add_record would write it, *TAKEN is 1 and *PP moves past the line
   end.  Otherwise *TAKEN is 0 and nothing is counted (numbers of the row may have been
   written; the general path then reads the record from its start and writes them again).
   The other cells are located first and go through bl_io_put_cell only once the record is
   known to be taken, so that levels, counts, limits and errors are those of the general
   path; returns its status. */
static int
fast_record (reader *rd, bl_table *t, char **pp, const char *end, size_t line, int *taken,
             bl_err *err)
{
  const size_t r = t->nrows, nc = t->ncols;
  const char *p = *pp;
  int any_other = 0;
  *taken = 0;
  if (r == t->cap || t->ndecided != nc || rd->fcap < nc)
    return BL_OK;
  for (size_t j = 0; j < nc; j++) {
    column *const c = &t->cols[j];
    if (c->type == COL_NUM) {
      double x;
      if (!fast_cell (&p, end, rd, &x) || !cell_end (&p, end, rd->delim, j, nc))
        return BL_OK;
      c->num[r] = x;
    } else {
      field *const f = &rd->f[j];
      if (p < end && *p == '"')
        return BL_OK;
      f->s = (char *) p;
      while (p < end && !rd->stop[(unsigned char) *p])
        p++;
      f->n = (size_t) (p - f->s);
      f->line = line;
      f->dquote = 0;
      if (!cell_end (&p, end, rd->delim, j, nc))
        return BL_OK;
      any_other |= c->type != COL_SKIP;
    }
  }
  if ((size_t) (p - *pp) > rd->max_record)
    return BL_OK;               /* the general path refuses it */
  for (size_t j = 0; any_other && j < nc; j++) {
    int st;
    if (t->cols[j].type != COL_NUM && (st = bl_io_put_cell (rd, t, j, &rd->f[j], err)) != BL_OK)
      return st;
  }
  t->line[r] = line;
  t->nrows++;
  *pp = (char *) p;
  *taken = 1;
  return BL_OK;
}

/* Convert the fields of one data record (NF of them, starting on line LINE) into row
   t->nrows. */
static int
add_record (reader *rd, bl_table *t, size_t nf, size_t line, bl_err *err)
{
  const size_t r = t->nrows;
  if (nf != t->ncols) {
    char msg[128];
    snprintf (msg, sizeof msg, "record has %zu field%s, header has %zu", nf,
              nf == 1 ? "" : "s", t->ncols);
    return bl_io_fail_at (rd, err, line, 0, msg);
  }
  if (r == t->cap) {
    if (t->frozen)              /* cannot happen: bl_io_par_step reserved enough rows */
      return bl_fail (err, BL_EINTERNAL, rd->name, "row capacity reached in a parallel step");
    if (bl_io_grow_rows (t) != BL_OK)
      return bl_io_fail_nomem (rd, err);
  }
  for (size_t j = 0; j < nf; j++) {
    const int st = bl_io_put_cell (rd, t, j, &rd->f[j], err);
    if (st != BL_OK)
      return st;
  }
  t->line[r] = line;
  t->nrows++;
  return BL_OK;
}


/* Parse every complete record in [ps->pos, rd->len).  Returns BL_CONTINUE when the buffer
   ends (at its end, or at the start of a record that needs more bytes; ps->pos is there),
   BL_OK right after the header was taken when HEADER_ONLY is set, or another code with ERR
   filled. */
int
bl_io_parse_avail (reader *rd, bl_table *t, const bl_table_opts *opt, pstate *ps,
                   int header_only, bl_err *err)
{
  for (;;) {
    char *p = rd->buf + ps->pos;
    char *const end = rd->buf + rd->len;
    size_t nf, next_line = ps->line;
    int st;
    if (p == end)
      return BL_CONTINUE;
    if (*p == '\n' || *p == '\r') {
      /* An empty line: a record of one empty field, unless only empty lines follow. */
      st = line_end (rd, &p, end, ps->line, 1, err);
      if (st == REC_ERR)
        return BL_EDATA;
      if (st == REC_MORE)
        return BL_CONTINUE;
      if (ps->pending++ == 0)
        ps->pending_line = ps->line;
      ps->line++;
      ps->pos = (size_t) (p - rd->buf);
      continue;
    }
    if (ps->pending) {
      if (!ps->have_header)
        return bl_io_fail_at (rd, err, ps->pending_line, 0,
                              "no header row: the first line is empty");
      for (; ps->pending; ps->pending--, ps->pending_line++) {
        rd->f[0].s = p;
        rd->f[0].n = 0;
        rd->f[0].line = ps->pending_line;
        rd->f[0].dquote = 0;
        if ((st = add_record (rd, t, 1, ps->pending_line, err)) != BL_OK)
          return st;
      }
    }
    if (ps->have_header) {
      int taken;
      if ((st = fast_record (rd, t, &p, end, ps->line, &taken, err)) != BL_OK)
        return st;
      if (taken) {
        ps->line++;
        ps->pos = (size_t) (p - rd->buf);
        continue;
      }
    }
    st = bl_io_parse_record (rd, &p, &next_line, &nf, err);
    if (st == REC_ERR)
      return BL_EDATA;
    if (st == REC_MORE)
      return BL_CONTINUE;
    if ((size_t) (p - (rd->buf + ps->pos)) > rd->max_record) {
      char msg[160];
      snprintf (msg, sizeof msg, "a record longer than %zu bytes starts here (the limit on "
                "one record)", rd->max_record);
      return bl_io_fail_at (rd, err, ps->line, 0, msg);
    }
    if (!ps->have_header) {
      if ((st = bl_io_take_header (rd, t, nf, opt, err)) != BL_OK)
        return st;
      ps->have_header = 1;
    } else if ((st = add_record (rd, t, nf, ps->line, err)) != BL_OK)
      return st;
    ps->line = next_line;
    ps->pos = (size_t) (p - rd->buf);
    if (header_only && ps->have_header)
      return BL_OK;
  }
}
