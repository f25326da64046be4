/* io_parallel.c -- the reader's speculative two-thread parse: a chunk split at a line end,
   the second part parsed by the partner thread (thread.h) while this thread parses the
   first, the guess checked and the rows merged (or the part parsed again).  Layer: io (uses
   io_record.c, io_scan.h and the column storage of table.c). */
#include <math.h>
#include <stdint.h>
#include <string.h>
#ifdef __SSE2__
#include <emmintrin.h>
#endif
#include "alloc.h"
#include "io_parallel.h"
#include "io_scan.h"

/* ------------------------------------------------------------------ parallel parse

   A chunk [pos, end) that ends at a line end is split at the first line end after its
   middle.  A worker thread parses the second part on the guess that the split lies outside
   quotes, while the calling thread parses the first part as usual, stopping at the split.
   When the first part ends exactly at the split, with no empty lines pending, the guess was
   right and the worker's rows are appended in order; otherwise (and whenever the worker met
   anything it could not take: a bad cell, a wrong field count, an empty line, a quote left
   open) its work is dropped and the second part is parsed again sequentially, so that the
   table and the first error are those of the sequential parse, byte for byte.

   The worker writes nothing that the calling thread reads, and allocates nothing (all its
   arrays are made beforehand on the calling thread, so fault injection stays
   deterministic).  It converts the numeric columns itself, straight into the table's arrays:
   it counts the line feeds of the first part, and as every record of the first part ends at
   one, its rows start at most that many rows on (when quoted line feeds make the first part
   hold fewer rows, the merge moves them down).  The calling thread reserves the rows
   beforehand, and the arrays are frozen (never reallocated) until the worker ends.  For a
   categorical column, or one whose type is not known yet when it starts, the worker only
   records where each cell is, and the merge feeds those cells through bl_io_put_cell in row
   order, so that level codes and type decisions are those of the sequential parse.  It
   never writes the shared buffer: the strtod path works on a copy, and "" pairs are left
   for the merge. */

/* The line feeds in [P, P + N).  SSE2 where the compiler offers it (every x86-64): 16
   bytes compared at once, the matches subtracted from byte counters (a match is -1) for at
   most 255 blocks, then summed by _mm_sad_epu8; a byte loop elsewhere and for the tail.
   (memchr called once per line costs a call per line: 4 GB/s on 80-byte lines.) */
static size_t
count_lf (const char *p, size_t n)
{
  size_t c = 0;
#ifdef __SSE2__
  const __m128i lf = _mm_set1_epi8 ('\n'), zero = _mm_setzero_si128 ();
  while (n >= 16) {
    size_t blocks = n / 16;
    __m128i acc = zero, sum;
    if (blocks > 255)
      blocks = 255;
    for (size_t b = 0; b < blocks; b++, p += 16)
      acc = _mm_sub_epi8 (acc, _mm_cmpeq_epi8 (_mm_loadu_si128 ((const __m128i *) p), lf));
    sum = _mm_sad_epu8 (acc, zero);
    c += (size_t) _mm_cvtsi128_si32 (sum) + (size_t) _mm_extract_epi16 (sum, 4);
    n -= blocks * 16;
  }
#endif
  for (; n; n--)
    c += *p++ == '\n';
  return c;
}

void
bl_io_spec_free (bl_io_spec *w)
{
  bl_partner_stop (&w->partner);
  for (size_t j = 0; j < w->ncols; j++)
    if (w->raw)
      bl_free (w->raw[j]);
  bl_free (w->num);
  bl_free (w->raw);
  bl_free (w->type);
  bl_free (w->rd.f);
  memset (w, 0, sizeof *w);
}

/* Make W ready for a step of table T whose first part holds at most ROWS1 records (its line
   feeds: every record of it ends at one, as a carriage return must be followed by one) and
   whose worker may take ROWS2 records, and reserve table rows for both.  Returns BL_OK or
   BL_ENOMEM. */
static int
spec_prepare (bl_io_spec *w, const reader *rd, bl_table *t, size_t rows1, size_t rows2)
{
  const size_t nc = t->ncols, rows = rows2;
  if (!w->type) {
    w->ncols = nc;
    w->type = bl_calloc (nc, sizeof *w->type);
    w->num = bl_calloc (nc, sizeof *w->num);
    w->raw = bl_calloc (nc, sizeof *w->raw);
    w->rd.f = bl_mallocn (nc, sizeof *w->rd.f);
    if (!w->type || !w->num || !w->raw || !w->rd.f)
      return BL_ENOMEM;
    w->rd.fcap = nc;
  }
  if (rows > SIZE_MAX / sizeof (field) || rows1 > SIZE_MAX / 4 - rows
      || t->nrows > SIZE_MAX / 4 - rows - rows1)
    return BL_ENOMEM;
  if (rows > w->rows_cap) {
    for (size_t j = 0; j < nc; j++)
      if (w->raw[j]) {
        field *v = bl_realloc (w->raw[j], rows * sizeof *v);
        if (!v)
          return BL_ENOMEM;
        w->raw[j] = v;
      }
    w->rows_cap = rows;
  }
  w->rows = rows;
  if (t->cap < t->nrows + rows1 + rows && bl_io_grow_rows_to (t, t->nrows + rows1 + rows) != BL_OK)
    return BL_ENOMEM;
  for (size_t j = 0; j < nc; j++) {
    w->type[j] = t->cols[j].type;
    w->num[j] = w->type[j] == COL_NUM ? t->cols[j].num : NULL;
    if (w->type[j] != COL_NUM && w->type[j] != COL_SKIP && !w->raw[j]
        && !(w->raw[j] = bl_mallocn (w->rows_cap, sizeof *w->raw[j])))
      return BL_ENOMEM;
  }
  w->all_decided = t->ndecided == nc;
  w->line = t->line;
  w->base = t->nrows;
  w->cap = t->cap;
  /* The reader's settings, with its own fields; it never grows them (fmax = fcap). */
  w->rd.name = rd->name;
  w->rd.delim = rd->delim;
  w->rd.mark = rd->mark;
  memcpy (w->rd.stop, rd->stop, sizeof rd->stop);
  w->rd.fmax = nc;
  w->rd.max_levels = rd->max_levels;
  w->rd.max_record = rd->max_record;
  w->rd.eof = 1;              /* the part ends at a line end or at the end of the input */
  w->rd.src = NULL;
  return BL_OK;
}

/* The worker: parse all of w->rd.buf, or give up (w->ok = 0) at the first thing it cannot
   take.  Lines count from 0 at the split. */
static void
spec_run (void *arg)
{
  bl_io_spec *w = arg;
  reader *rd = &w->rd;
  char *p = rd->buf;
  char *const end = rd->buf + rd->len;
  size_t line = 0, r, nl = 0, lim;
  char tmp[SPEC_NUM_MAX];
  bl_err scratch;             /* bl_io_parse_record's messages, never shown */
  w->ok = 0;
  nl = w->first_nl;
  w->off = r = w->base + nl;
  if (r > w->cap || w->cap - r < w->rows)
    return;
  lim = r + w->rows;
  while (p < end) {
    size_t nf, next = line;
    if (*p == '\n' || *p == '\r' || r == lim)
      return;
    if (w->all_decided) {       /* the one-pass form of fast_record, into the worker's rows */
      const char *q = p;
      size_t j;
      for (j = 0; j < w->ncols; j++) {
        if (w->type[j] == COL_NUM) {
          double x;
          if (!fast_cell (&q, end, rd, &x) || !cell_end (&q, end, rd->delim, j, w->ncols))
            break;
          w->num[j][r] = x;
        } else {
          const char *const s0 = q;
          if (q < end && *q == '"')
            break;
          while (q < end && !rd->stop[(unsigned char) *q])
            q++;
          if (w->type[j] != COL_SKIP) {
            field *const f = &w->raw[j][r - w->off];
            f->s = (char *) s0;
            f->n = (size_t) (q - s0);
            f->line = w->line0 + line;
            f->dquote = 0;
          }
          if (!cell_end (&q, end, rd->delim, j, w->ncols))
            break;
        }
      }
      if (j == w->ncols && (size_t) (q - p) <= rd->max_record) {
        w->line[r++] = w->line0 + line++;
        p = (char *) q;
        continue;
      }
    }
    {
      const char *const rec = p;
      if (bl_io_parse_record (rd, &p, &next, &nf, &scratch) != REC_DONE || nf != w->ncols
          || (size_t) (p - rec) > rd->max_record)
        return;            /* the sequential parse gives the error */
    }
    for (size_t j = 0; j < nf; j++) {
      const field *f = &rd->f[j];
      const char *v = f->s;
      size_t m = f->n;
      double x;
      if (w->type[j] == COL_SKIP)
        continue;
      if (w->type[j] != COL_NUM) {
        w->raw[j][r - w->off] = *f;
        w->raw[j][r - w->off].line += w->line0;
        continue;
      }
      if (f->dquote)
        return;            /* holds a quote: never a number nor a missing marker */
      while (m && is_blank (*v))
        v++, m--;
      while (m && is_blank (v[m - 1]))
        m--;
      if (is_missing (v, m))
        x = NAN;
      else if (parse_number ((char *) v, m, rd->mark, &x, tmp, sizeof tmp) != NUM_OK)
        return;
      w->num[j][r] = x;
    }
    w->line[r++] = w->line0 + line;
    line = next;
  }
  w->nrows = r - w->off;
  w->lines = line;
  w->ok = 1;
}

/* Hand the prepared step to the worker thread, starting it at the first step.  Returns 1
   when the worker has the step, 0 when there is no worker (it could not be started: the
   step then goes sequentially, with the same result). */
static int
spec_begin (bl_io_spec *w)
{
  if (bl_partner_start (&w->partner) != 0)
    return 0;
  bl_partner_post (&w->partner, spec_run, w);
  return 1;
}

/* Append the worker's rows to T; BASE_LINE is the line of the split.  The worker's lines
   count from w->line0, which the first part's line feeds predict; should BASE_LINE differ,
   the difference is added (modulo 2^64, so either sign). */
static int
spec_merge (reader *rd, bl_table *t, const bl_io_spec *w, size_t base_line, bl_err *err)
{
  const size_t base = t->nrows, m = w->nrows, delta = base_line - w->line0;
  int any_raw = 0;
  if (w->off != base) {         /* quoted line feeds in the first part: move the rows down */
    for (size_t j = 0; j < w->ncols; j++)
      if (w->type[j] == COL_NUM)
        memmove (t->cols[j].num + base, t->cols[j].num + w->off, m * sizeof (double));
    memmove (t->line + base, t->line + w->off, m * sizeof *t->line);
  }
  for (size_t j = 0; j < w->ncols; j++)
    if (w->type[j] != COL_NUM && w->type[j] != COL_SKIP)
      any_raw = 1;
  if (any_raw)
    for (size_t i = 0; i < m; i++) {
      t->nrows = base + i;
      for (size_t j = 0; j < w->ncols; j++) {
        field f;
        int st;
        if (w->type[j] == COL_NUM || w->type[j] == COL_SKIP)
          continue;
        f = w->raw[j][i];
        f.line += delta;
        if ((st = bl_io_put_cell (rd, t, j, &f, err)) != BL_OK)
          return st;
      }
    }
  if (delta != 0)
    for (size_t i = 0; i < m; i++)
      t->line[base + i] += delta;
  t->nrows = base + m;
  return BL_OK;
}

/* One parallel step over the complete records from ps->pos, when there are enough of
   them.  On return ps->pos has moved past them (or nothing happened).  Returns BL_OK or an
   error code with ERR filled. */
int
bl_io_par_step (reader *rd, bl_table *t, const bl_table_opts *opt, pstate *ps,
                bl_io_spec *w, size_t min_part, bl_err *err)
{
  char *const buf = rd->buf;
  size_t end = rd->len, split, save_len;
  const char *nl;
  int started, st, save_eof;
  if (!rd->eof) {             /* the chunk ends after its last line feed */
    while (end > ps->pos && buf[end - 1] != '\n')
      end--;
  }
  if (end - ps->pos < 2 * min_part)
    return BL_OK;
  /* Columns whose type is still open make the worker only locate their cells, which the
     merge then converts on this thread: right after the header (the first step of every
     input) a first slice goes sequentially, so that the first records bl_io_decide the types. */
  if (t->ndecided < t->ncols && t->nrows < SPEC_DECIDE_ROWS) {
    const char *cut = memchr (buf + ps->pos + min_part / 4, '\n', end - ps->pos - min_part / 4);
    if (cut) {
      save_len = rd->len;
      save_eof = rd->eof;
      rd->len = (size_t) (cut + 1 - buf);
      rd->eof = 0;
      st = bl_io_parse_avail (rd, t, opt, ps, 0, err);
      rd->len = save_len;
      rd->eof = save_eof;
      if (st != BL_CONTINUE)
        return st;
      /* empty lines left pending would become records of the first part that its line
         feeds do not count (the worker's rows start that count on) */
      if (ps->pending || end - ps->pos < 2 * min_part)
        return BL_OK;
    }
  }
  nl = memchr (buf + ps->pos + (end - ps->pos) / 2, '\n', (end - ps->pos) / 2);
  if (!nl || (size_t) (nl + 1 - buf) >= end)
    return BL_OK;
  split = (size_t) (nl + 1 - buf);
  w->first_nl = count_lf (buf + ps->pos, split - ps->pos);
  /* every line feed of the first part moves the line count by one: the split's line */
  w->line0 = ps->line + w->first_nl;
  /* The worker's rows: the first part's density of line feeds applied to the second part,
     with an eighth to spare, and never more than one row per NCOLS bytes (a record has its
     delimiters and a line end).  A second part with more rows than this is parsed again
     sequentially (the worker stops at its limit), so the reservation follows the input's
     real rows instead of that worst case (which cost a copy of every array near the end). */
  {
    const size_t len1 = split - ps->pos, len2 = end - split, most = len2 / t->ncols + 2;
    const double guess = (double) w->first_nl * ((double) len2 / (double) len1) * 1.125 + 64.0;
    const size_t rows2 = guess < (double) most ? (size_t) guess : most;
    if (spec_prepare (w, rd, t, w->first_nl, rows2) != BL_OK)
      return bl_io_fail_nomem (rd, err);
  }
  w->rd.buf = buf + split;
  w->rd.len = end - split;
  started = spec_begin (w);
  t->frozen = started;
  /* The first part, stopping at the split as if the input paused there. */
  save_len = rd->len;
  save_eof = rd->eof;
  rd->len = split;
  rd->eof = 0;
  st = bl_io_parse_avail (rd, t, opt, ps, 0, err);
  rd->len = save_len;
  rd->eof = save_eof;
  if (started)
    bl_partner_wait (&w->partner);
  t->frozen = 0;
  if (st != BL_CONTINUE)
    return st;
  if (started && w->ok && ps->pos == split && ps->pending == 0) {
    if ((st = spec_merge (rd, t, w, ps->line, err)) != BL_OK)
      return st;
    ps->pos = end;
    ps->line += w->lines;
    return BL_OK;
  }
  /* The guess was wrong, or the worker stopped: the rest sequentially. */
  st = bl_io_parse_avail (rd, t, opt, ps, 0, err);
  return st == BL_CONTINUE ? BL_OK : st;
}
