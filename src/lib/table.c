/* table.c -- columnar table read from CSV or TSV (RFC 4180), with typed columns.

   The reader streams: it asks the source for chunks (READ_CHUNK bytes) and parses every
   complete record in the buffer; a record cut by the end of the buffer is moved to the front
   and parsed again once more bytes have arrived (the buffer doubles when one record is larger
   than it).  A record is parsed in two steps: first its fields are located (quotes, line
   ends, NUL bytes checked), then each field is converted into its column.  Nothing is
   converted before the record is known to be complete, so the buffer may be rewritten in
   place during conversion (unescaping "" and terminating numbers for strtod).

   Storage is columnar: one double array per numeric column (NAN for a missing cell), one
   int32 code array per categorical column, all grown together by doubling.  The distinct
   strings of a categorical column live in a hash table (one copy per level); codes are given
   in order of first appearance and remapped at the end so that levels are in byte order. */
#include <errno.h>
#include <float.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "alloc.h"
#include "source.h"
#include "table.h"

/* Bytes asked of the source per read; also the initial buffer size. */
#define READ_CHUNK ((size_t) 1 << 20)
/* Rows allocated at the first data record; capacity doubles after that. */
#define ROWS_INIT ((size_t) 1024)
/* Longest excerpt of a bad cell quoted in a message. */
#define CELL_QUOTE_MAX 60

enum { COL_UNDECIDED, COL_NUM, COL_CAT };
enum { REC_DONE, REC_MORE, REC_ERR };

/* A set of distinct strings in insertion order, with an open-addressing index (linear
   probing, load factor at most 1/2; common practice, no source). */
typedef struct dict {
  char **str;                 /* copies, NUL-terminated, in insertion order */
  size_t *len;
  uint32_t *hash;
  size_t n, cap;
  uint32_t *slot;             /* 0 empty, else index + 1 */
  size_t nslot;               /* a power of two, or 0 before the first insertion */
} dict;

typedef struct column {
  int type;
  double *num;                /* COL_NUM: cap entries */
  int32_t *codes;             /* COL_CAT: cap entries */
  dict lev;                   /* COL_CAT: levels (sorted at the end) */
} column;

struct bl_table {
  char *source;
  size_t nrows, ncols, cap;
  dict names;                 /* column names, in column order */
  column *cols;
  size_t *line;               /* cap entries: physical start line of each record */
};

/* One located field of the current record.  S points into the reader's buffer, after an
   opening quote if there was one; N counts raw bytes (before "" is unescaped). */
typedef struct field {
  char *s;
  size_t n;
  size_t line;
  int dquote;                 /* quoted and holds "" pairs */
} field;

typedef struct reader {
  bl_source *src;
  const char *name;
  char *buf;                  /* cap + 1 bytes: one spare for a NUL after the last cell */
  size_t cap, len;
  int eof;
  char delim, mark;           /* field delimiter; decimal mark ('.' or ',') */
  unsigned char stop[256];    /* nonzero for bytes that end an unquoted field */
  field *f;
  size_t fcap, fmax;          /* fields stored: at most fmax (ncols once the header is read) */
  field spare;                /* fields past fmax are parsed into this and only counted */
  size_t max_levels;
} reader;

/* ------------------------------------------------------------------ strings and dict */

/* A 64-bit multiply-xorshift hash over 8-byte words (common practice, no source). */
static uint32_t
hash_bytes (const char *s, size_t n)
{
  uint64_t h = 0x9e3779b97f4a7c15u ^ (uint64_t) n;
  uint64_t w;
  while (n >= 8) {
    memcpy (&w, s, 8);
    h = (h ^ w) * 0xbf58476d1ce4e5b9u;
    h ^= h >> 31;
    s += 8;
    n -= 8;
  }
  w = 0;
  memcpy (&w, s, n);
  h = (h ^ w) * 0x94d049bb133111ebu;
  h ^= h >> 29;
  h *= 0xbf58476d1ce4e5b9u;
  h ^= h >> 32;
  return (uint32_t) h;
}

static void
dict_free (dict *d)
{
  for (size_t i = 0; i < d->n; i++)
    bl_free (d->str[i]);
  bl_free (d->str);
  bl_free (d->len);
  bl_free (d->hash);
  bl_free (d->slot);
  memset (d, 0, sizeof *d);
}

/* Rebuild the index with NSLOT slots.  Returns BL_OK or BL_ENOMEM (index unchanged). */
static int
dict_rehash (dict *d, size_t nslot)
{
  uint32_t *slot = bl_calloc (nslot, sizeof *slot);
  const size_t mask = nslot - 1;
  if (!slot)
    return BL_ENOMEM;
  for (size_t i = 0; i < d->n; i++) {
    size_t k = d->hash[i] & mask;
    while (slot[k])
      k = (k + 1) & mask;
    slot[k] = (uint32_t) (i + 1);
  }
  bl_free (d->slot);
  d->slot = slot;
  d->nslot = nslot;
  return BL_OK;
}

/* Find S (N bytes) in D, or add a copy when D holds fewer than LIMIT strings.  Sets *IDX.
   Returns 0 when found, 1 when added, 2 when adding would exceed LIMIT, or -1 when memory
   ran out (D unchanged). */
static int
dict_intern (dict *d, const char *s, size_t n, size_t limit, size_t *idx)
{
  const uint32_t h = hash_bytes (s, n);
  size_t k, mask;
  char *copy;
  if (d->nslot) {
    mask = d->nslot - 1;
    for (k = h & mask; d->slot[k]; k = (k + 1) & mask) {
      const size_t i = d->slot[k] - 1;
      if (d->hash[i] == h && d->len[i] == n && memcmp (d->str[i], s, n) == 0) {
        *idx = i;
        return 0;
      }
    }
  }
  if (d->n >= limit)
    return 2;
  if (d->n == d->cap) {
    const size_t cap = d->cap ? 2 * d->cap : 16;
    char **str = bl_realloc (d->str, cap * sizeof *str);
    size_t *len;
    uint32_t *hash;
    if (!str)
      return -1;
    d->str = str;
    len = bl_realloc (d->len, cap * sizeof *len);
    if (!len)
      return -1;
    d->len = len;
    hash = bl_realloc (d->hash, cap * sizeof *hash);
    if (!hash)
      return -1;
    d->hash = hash;
    d->cap = cap;
  }
  if (2 * (d->n + 1) > d->nslot && dict_rehash (d, d->nslot ? 2 * d->nslot : 32) != BL_OK)
    return -1;
  copy = bl_malloc (n + 1);
  if (!copy)
    return -1;
  memcpy (copy, s, n);
  copy[n] = '\0';
  mask = d->nslot - 1;
  for (k = h & mask; d->slot[k]; k = (k + 1) & mask)
    ;
  d->slot[k] = (uint32_t) (d->n + 1);
  d->str[d->n] = copy;
  d->len[d->n] = n;
  d->hash[d->n] = h;
  *idx = d->n++;
  return 1;
}

/* Nonzero when S (N bytes) is well-formed UTF-8 (The Unicode Standard, ch. 3, table 3-7:
   no overlong forms, no surrogates D800-DFFF, nothing above U+10FFFF). */
static int
utf8_valid (const unsigned char *s, size_t n)
{
  size_t i = 0;
  while (i < n) {
    const unsigned c = s[i];
    unsigned lo = 0x80, hi = 0xbf;
    size_t more;
    if (c < 0x80) {
      i++;
      continue;
    }
    if (c >= 0xc2 && c <= 0xdf)
      more = 1;
    else if (c >= 0xe0 && c <= 0xef) {
      more = 2;
      if (c == 0xe0)
        lo = 0xa0;              /* overlong below U+0800 */
      else if (c == 0xed)
        hi = 0x9f;              /* surrogates */
    } else if (c >= 0xf0 && c <= 0xf4) {
      more = 3;
      if (c == 0xf0)
        lo = 0x90;              /* overlong below U+10000 */
      else if (c == 0xf4)
        hi = 0x8f;              /* above U+10FFFF */
    } else
      return 0;
    if (n - i <= more)
      return 0;
    if (s[i + 1] < lo || s[i + 1] > hi)
      return 0;
    for (size_t k = 2; k <= more; k++)
      if (s[i + k] < 0x80 || s[i + k] > 0xbf)
        return 0;
    i += more + 1;
  }
  return 1;
}

/* Remove the second quote of every "" pair in place; returns the new length. */
static size_t
unescape (char *s, size_t n)
{
  size_t r = 0, w = 0;
  while (r < n) {
    if (s[r] == '"')
      r++;                      /* the parser checked that another quote follows */
    s[w++] = s[r++];
  }
  return w;
}

static int
is_blank (char c)
{
  return c == ' ' || c == '\t';
}

static int
is_missing (const char *s, size_t n)
{
  switch (n) {
  case 0: return 1;
  case 1: return s[0] == '.';
  case 2: return s[0] == 'N' && s[1] == 'A';
  case 3: return s[0] == 'N' && s[1] == 'a' && s[2] == 'N';
  default: return 0;
  }
}

/* ------------------------------------------------------------------ numbers */

enum { NUM_OK, NUM_NOT, NUM_OVERFLOW, NUM_LOCALE };

/* Exact powers of ten 1e0..1e22: every one is a double exactly (5^22 < 2^53). */
static const double pow10_exact[23] = {
  1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11,
  1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22
};

/* Parse the decimal number S (N bytes, no surrounding blanks; S[N] is writable) with decimal
   mark MARK.  Grammar: [+-]? (D+ (MARK D*)? | MARK D+) ([eE] [+-]? D+)?.

   Clinger's fast path (Clinger 1990, "How to read floating point numbers accurately", Proc.
   ACM PLDI, 92-101): when the significant digits form an integer w < 10^15 (exact in a
   double) and the decimal exponent e satisfies |e| <= 22 (10^|e| exact), w * 10^e or
   w / 10^-e is one correctly rounded IEEE operation on exact operands, hence equal to the
   correctly rounded value that strtod returns.  Everything else goes to strtod (glibc's is
   correctly rounded in the C locale).  The fast path needs double arithmetic without excess
   precision (FLT_EVAL_METHOD 0, as on x86-64 SSE and aarch64).

   With TMP non-NULL, S is left untouched: the strtod path works on a copy in TMP (TMP_CAP
   bytes), and a cell too long for it is NUM_NOT (the parallel parser then falls back). */
static int
parse_number (char *s, size_t n, char mark, double *out, char *tmp, size_t tmp_cap)
{
  const char *p = s, *q;
  const char *const end = s + n;
  uint64_t w = 0;               /* wraps for more than 19 digits: then unused */
  size_t nint, nfrac = 0, nzero = 0;
  int neg = 0, eneg = 0;
  long e10 = 0, ex = 0;
  if (p < end && (*p == '+' || *p == '-'))
    neg = *p++ == '-';
  for (; p < end && *p == '0'; p++)
    nzero++;                    /* leading zeros carry no significance */
  for (q = p; p < end && (unsigned) (*p - '0') < 10; p++)
    w = 10 * w + (uint64_t) (*p - '0');
  nint = (size_t) (p - q);
  if (p < end && *p == mark) {
    p++;
    if (nint == 0)
      for (; p < end && *p == '0'; p++, e10--)
        nzero++;
    for (q = p; p < end && (unsigned) (*p - '0') < 10; p++)
      w = 10 * w + (uint64_t) (*p - '0');
    nfrac = (size_t) (p - q);
    e10 -= (long) nfrac;
  }
  if (nzero + nint + nfrac == 0)
    return NUM_NOT;
  if (p < end && (*p == 'e' || *p == 'E')) {
    p++;
    if (p < end && (*p == '+' || *p == '-'))
      eneg = *p++ == '-';
    if (p == end || (unsigned) (*p - '0') >= 10)
      return NUM_NOT;
    for (; p < end && (unsigned) (*p - '0') < 10; p++)
      if (ex < 100000)          /* beyond this strtod decides (overflow or zero) */
        ex = 10 * ex + (*p - '0');
    e10 += eneg ? -ex : ex;
  }
  if (p != end)
    return NUM_NOT;
#if defined(FLT_EVAL_METHOD) && FLT_EVAL_METHOD == 0
  if (nint + nfrac == 0) {      /* every digit is a zero */
    *out = neg ? -0.0 : 0.0;
    return NUM_OK;
  }
  if (nint + nfrac <= 15 && e10 >= -22 && e10 <= 22) {
    double v = (double) w;
    v = e10 < 0 ? v / pow10_exact[-e10] : v * pow10_exact[e10];
    *out = neg ? -v : v;
    return NUM_OK;
  }
#endif
  if (tmp) {
    if (n >= tmp_cap)
      return NUM_NOT;
    memcpy (tmp, s, n);
    s = tmp;
  }
  {
    char *const end2 = s + n;
    char *stop;
    double v;
    if (mark != '.')
      for (char *r = s; r < end2; r++)
        if (*r == mark)
          *r = '.';
    s[n] = '\0';
    errno = 0;
    v = strtod (s, &stop);
    if (stop != end2)           /* the grammar is a subset of strtod's in the C locale */
      return NUM_LOCALE;
    if (errno == ERANGE && fabs (v) == HUGE_VAL)
      return NUM_OVERFLOW;
    *out = v;
    return NUM_OK;
  }
}

/* Nonzero when S (N bytes, S[N] writable) is one of the forms that strtod reads as a number
   but the grammar refuses: hex ("0x1A", "0x1p3"), "inf", "infinity", "nan", "nan(...)", with
   an optional sign.  Such a cell is refused outright rather than taken for a label. */
static int
strtod_would_take (char *s, size_t n)
{
  char *stop;
  size_t i = 0;
  if (n > 0 && (s[0] == '+' || s[0] == '-'))
    i++;
  if (i == n)
    return 0;
  if (!(s[i] == 'i' || s[i] == 'I' || s[i] == 'n' || s[i] == 'N'
        || (s[i] == '0' && i + 1 < n && (s[i + 1] == 'x' || s[i + 1] == 'X'))))
    return 0;
  s[n] = '\0';
  (void) strtod (s, &stop);
  return stop == s + n;
}

/* ------------------------------------------------------------------ errors */

static int
fail_cell (const reader *rd, bl_err *err, const field *f, size_t col, const char *fmt,
           const char *cell, size_t n, const char *colname)
{
  char where[1024];
  const int cut = n > CELL_QUOTE_MAX;
  snprintf (where, sizeof where, "%s:%zu:%zu", rd->name, f->line, col);
  return bl_fail (err, BL_EDATA, where, fmt, (int) (cut ? CELL_QUOTE_MAX : n), cell,
                  cut ? "..." : "", colname);
}

static int
fail_at (const reader *rd, bl_err *err, size_t line, size_t col, const char *msg)
{
  char where[1024];
  if (col)
    snprintf (where, sizeof where, "%s:%zu:%zu", rd->name, line, col);
  else
    snprintf (where, sizeof where, "%s:%zu", rd->name, line);
  return bl_fail (err, BL_EDATA, where, "%s", msg);
}

static int
fail_nomem (const reader *rd, bl_err *err)
{
  return bl_fail (err, BL_ENOMEM, rd->name, "out of memory reading the table");
}

/* ------------------------------------------------------------------ record parser */

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
  fail_at (rd, err, line, col, "carriage return not followed by a line feed");
  return REC_ERR;
}

/* Locate the fields of the record at *PP.  On REC_DONE, *NF is the field count, *PP points
   past the record and *LINE is the line after it.  REC_MORE: the buffer ends inside the
   record and more input exists (nothing changed).  REC_ERR: ERR is filled. */
static int
parse_record (reader *rd, char **pp, size_t *line, size_t *nf_out, bl_err *err)
{
  char *p = *pp;
  char *const end = rd->buf + rd->len;
  const char delim = rd->delim;
  size_t ln = *line, nf = 0;
  for (;;) {
    field *f;
    int c, r;
    if (nf < rd->fmax) {
      if (nf == rd->fcap) {
        const size_t cap = rd->fcap ? 2 * rd->fcap : 64;
        field *nfs = bl_realloc (rd->f, cap * sizeof *nfs);
        if (!nfs) {
          fail_nomem (rd, err);
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
      /* RFC 4180 section 2, rules 5-7: a quoted field may hold delimiters, line breaks and
         quotes, each quote doubled. */
      char *q = f->s = p + 1, *e;
      for (;;) {
        e = memchr (q, '"', (size_t) (end - q));
        if (!e) {
          if (!rd->eof)
            return REC_MORE;
          fail_at (rd, err, f->line, nf, "quoted field is never closed (quote opened here)");
          return REC_ERR;
        }
        if (e + 1 == end && !rd->eof)
          return REC_MORE;      /* cannot tell "" from a closing quote yet */
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
          ln++;
        else if (*q == '\0') {
          fail_at (rd, err, ln, nf, "NUL byte in the input");
          return REC_ERR;
        }
      }
      p = e + 1;
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
      {
        char msg[96];
        if (c == '\0')
          snprintf (msg, sizeof msg, "NUL byte in the input");
        else if (c >= 0x20 && c < 0x7f)
          snprintf (msg, sizeof msg, "unexpected '%c' after a closing quote", c);
        else
          snprintf (msg, sizeof msg, "unexpected byte 0x%02x after a closing quote",
                    (unsigned) (unsigned char) c);
        fail_at (rd, err, ln, nf, msg);
        return REC_ERR;
      }
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
      fail_at (rd, err, ln, nf, "NUL byte in the input");
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

/* ------------------------------------------------------------------ table building */

static void
table_free_parts (bl_table *t)
{
  if (!t)
    return;
  if (t->cols)
    for (size_t j = 0; j < t->ncols; j++) {
      bl_free (t->cols[j].num);
      bl_free (t->cols[j].codes);
      dict_free (&t->cols[j].lev);
    }
  bl_free (t->cols);
  dict_free (&t->names);
  bl_free (t->line);
  bl_free (t->source);
  bl_free (t);
}

void
bl_table_free (bl_table *t)
{
  table_free_parts (t);
}

/* Double the row capacity of every allocated column and of the line array. */
static int
grow_rows (bl_table *t)
{
  const size_t cap = t->cap ? 2 * t->cap : ROWS_INIT;
  size_t *line;
  if (cap > SIZE_MAX / sizeof (double))
    return BL_ENOMEM;
  line = bl_realloc (t->line, cap * sizeof *line);
  if (!line)
    return BL_ENOMEM;
  t->line = line;
  for (size_t j = 0; j < t->ncols; j++) {
    column *c = &t->cols[j];
    if (c->type == COL_NUM) {
      double *v = bl_realloc (c->num, cap * sizeof *v);
      if (!v)
        return BL_ENOMEM;
      c->num = v;
    } else if (c->type == COL_CAT) {
      int32_t *v = bl_realloc (c->codes, cap * sizeof *v);
      if (!v)
        return BL_ENOMEM;
      c->codes = v;
    }
  }
  t->cap = cap;
  return BL_OK;
}

/* Give column C its type, with the first NROWS cells missing. */
static int
decide (bl_table *t, column *c, int type)
{
  const size_t cap = t->cap ? t->cap : 1;
  if (type == COL_NUM) {
    c->num = bl_mallocn (cap, sizeof *c->num);
    if (!c->num)
      return BL_ENOMEM;
    for (size_t i = 0; i < t->nrows; i++)
      c->num[i] = NAN;
  } else {
    c->codes = bl_mallocn (cap, sizeof *c->codes);
    if (!c->codes)
      return BL_ENOMEM;
    for (size_t i = 0; i < t->nrows; i++)
      c->codes[i] = -1;
  }
  c->type = type;
  return BL_OK;
}

static int
cat_cell (reader *rd, bl_table *t, column *c, size_t j, const field *f, const char *s,
          size_t n, bl_err *err)
{
  size_t idx;
  const int r = dict_intern (&c->lev, s, n, rd->max_levels, &idx);
  if (r < 0)
    return fail_nomem (rd, err);
  if (r == 2) {
    char where[1024];
    snprintf (where, sizeof where, "%s:%zu:%zu", rd->name, f->line, j + 1);
    return bl_fail (err, BL_EDATA, where,
                    "column '%s' has more than %zu distinct levels (the max_levels limit)",
                    t->names.str[j], rd->max_levels);
  }
  c->codes[t->nrows] = (int32_t) idx;
  return BL_OK;
}

static int
num_error (const reader *rd, const bl_table *t, size_t j, const field *f, char *s, size_t n,
           int r, bl_err *err)
{
  if (r == NUM_LOCALE) {
    char where[1024];
    snprintf (where, sizeof where, "%s:%zu:%zu", rd->name, f->line, j + 1);
    return bl_fail (err, BL_EINTERNAL, where, "strtod stopped early (LC_NUMERIC is not the "
                    "C locale?)");
  }
  if (r == NUM_OVERFLOW) {
    /* parse_number wrote '.' for the decimal mark; show the cell as written */
    if (rd->mark != '.')
      for (size_t k = 0; k < n; k++)
        if (s[k] == '.')
          s[k] = rd->mark;
    return fail_cell (rd, err, f, j + 1, "value '%.*s%s' overflows a double in column '%s'",
                      s, n, t->names.str[j]);
  }
  {
    /* the message shows the cell as written: undo the strtod preparation */
    char save = s[n];
    const int special = strtod_would_take (s, n);
    s[n] = save;
    if (special)
      return fail_cell (rd, err, f, j + 1, "not a decimal number: '%.*s%s' in column '%s' "
                        "(hex, infinity and nan forms are refused)", s, n, t->names.str[j]);
  }
  return fail_cell (rd, err, f, j + 1, "not a number: '%.*s%s' in column '%s' (declare the "
                    "column categorical if it holds labels)", s, n, t->names.str[j]);
}

/* Convert field F (its "" pairs still doubled) into column J at row t->nrows.  The
   parallel merge calls this too, for the cells a worker could not convert on its own. */
static int
put_cell (reader *rd, bl_table *t, size_t j, const field *f, bl_err *err)
{
  const size_t r = t->nrows;
  column *c = &t->cols[j];
  char *s = f->s, *v;
  const size_t n = f->dquote ? unescape (s, f->n) : f->n;
  size_t m;
  double x;
  int st;
  /* Blanks around a cell are ignored for numbers and missing markers; a categorical
     level keeps its exact text. */
  v = s;
  m = n;
  while (m && is_blank (*v))
    v++, m--;
  while (m && is_blank (v[m - 1]))
    m--;
  if (c->type == COL_NUM) {
    if (is_missing (v, m)) {
      c->num[r] = NAN;
      return BL_OK;
    }
    st = parse_number (v, m, rd->mark, &x, NULL, 0);
    if (st != NUM_OK)
      return num_error (rd, t, j, f, v, m, st, err);
    c->num[r] = x;
    return BL_OK;
  }
  if (is_missing (v, m)) {
    if (c->type == COL_CAT)
      c->codes[r] = -1;
    return BL_OK;
  }
  if (c->type == COL_UNDECIDED) {
    /* The first non-missing cell decides the column's type. */
    st = parse_number (v, m, rd->mark, &x, NULL, 0);
    if (st == NUM_OK) {
      if (decide (t, c, COL_NUM) != BL_OK)
        return fail_nomem (rd, err);
      c->num[r] = x;
      return BL_OK;
    }
    if (st == NUM_OVERFLOW || st == NUM_LOCALE)
      return num_error (rd, t, j, f, v, m, st, err);
    {
      const char save = v[m];
      const int special = strtod_would_take (v, m);
      v[m] = save;
      if (special)
        return num_error (rd, t, j, f, v, m, st, err);
    }
    if (decide (t, c, COL_CAT) != BL_OK)
      return fail_nomem (rd, err);
  }
  return cat_cell (rd, t, c, j, f, s, n, err);
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
    return fail_at (rd, err, line, 0, msg);
  }
  if (r == t->cap && grow_rows (t) != BL_OK)
    return fail_nomem (rd, err);
  for (size_t j = 0; j < nf; j++) {
    const int st = put_cell (rd, t, j, &rd->f[j], err);
    if (st != BL_OK)
      return st;
  }
  t->line[r] = line;
  t->nrows++;
  return BL_OK;
}

/* Take the header record: names non-empty, valid UTF-8, unique; set up the columns. */
static int
take_header (reader *rd, bl_table *t, size_t nf, const bl_table_opts *opt, bl_err *err)
{
  char where[1024];
  t->cols = bl_calloc (nf, sizeof *t->cols);
  if (!t->cols)
    return fail_nomem (rd, err);
  t->ncols = nf;
  for (size_t j = 0; j < nf; j++) {
    const field *f = &rd->f[j];
    const size_t n = f->dquote ? unescape (f->s, f->n) : f->n;
    size_t idx;
    int r;
    snprintf (where, sizeof where, "%s:%zu:%zu", rd->name, f->line, j + 1);
    if (n == 0)
      return bl_fail (err, BL_EDATA, where, "empty column name in the header");
    if (!utf8_valid ((const unsigned char *) f->s, n))
      return bl_fail (err, BL_EDATA, where, "column name is not valid UTF-8");
    r = dict_intern (&t->names, f->s, n, SIZE_MAX, &idx);
    if (r < 0)
      return fail_nomem (rd, err);
    if (r == 0)
      return bl_fail (err, BL_EDATA, where, "duplicate column name '%s' (also column %zu)",
                      t->names.str[idx], idx + 1);
  }
  for (size_t k = 0; opt->categorical && k < opt->n_categorical; k++) {
    const long j = bl_table_find (t, opt->categorical[k]);
    if (j < 0)
      return bl_fail (err, BL_ESPEC, rd->name,
                      "no column named '%s' (declared categorical)", opt->categorical[k]);
    t->cols[j].type = COL_CAT;
  }
  rd->fmax = nf;
  return BL_OK;
}

typedef struct lev_ref {
  const char *s;
  int32_t old;
} lev_ref;

static int
lev_cmp (const void *a, const void *b)
{
  return strcmp (((const lev_ref *) a)->s, ((const lev_ref *) b)->s);
}

/* Sort the levels of column C in byte order and renumber its codes. */
static int
sort_levels (bl_table *t, column *c)
{
  dict *d = &c->lev;
  lev_ref *ref;
  int32_t *map;
  char **str;
  size_t *len;
  uint32_t *hash;
  if (d->n == 0)
    return BL_OK;
  ref = bl_mallocn (d->n, sizeof *ref);
  map = bl_mallocn (d->n, sizeof *map);
  str = bl_mallocn (d->n, sizeof *str);
  len = bl_mallocn (d->n, sizeof *len);
  hash = bl_mallocn (d->n, sizeof *hash);
  if (!ref || !map || !str || !len || !hash) {
    bl_free (ref);
    bl_free (map);
    bl_free (str);
    bl_free (len);
    bl_free (hash);
    return BL_ENOMEM;
  }
  for (size_t k = 0; k < d->n; k++) {
    ref[k].s = d->str[k];
    ref[k].old = (int32_t) k;
  }
  qsort (ref, d->n, sizeof *ref, lev_cmp);
  for (size_t k = 0; k < d->n; k++) {
    const size_t o = (size_t) ref[k].old;
    map[o] = (int32_t) k;
    str[k] = d->str[o];
    len[k] = d->len[o];
    hash[k] = d->hash[o];
  }
  for (size_t i = 0; i < t->nrows; i++)
    if (c->codes[i] >= 0)
      c->codes[i] = map[c->codes[i]];
  bl_free (d->str);
  bl_free (d->len);
  bl_free (d->hash);
  d->str = str;
  d->len = len;
  d->hash = hash;
  d->cap = d->n;
  bl_free (ref);
  bl_free (map);
  /* the index is stale now and no longer needed */
  bl_free (d->slot);
  d->slot = NULL;
  d->nslot = 0;
  return BL_OK;
}

static int
finish (reader *rd, bl_table *t, bl_err *err)
{
  for (size_t j = 0; j < t->ncols; j++) {
    column *c = &t->cols[j];
    if (c->type == COL_UNDECIDED) {   /* no non-missing cell: numeric, all missing */
      if (decide (t, c, COL_NUM) != BL_OK)
        return fail_nomem (rd, err);
    } else if (c->type == COL_CAT) {
      if (!c->codes && decide (t, c, COL_CAT) != BL_OK)
        return fail_nomem (rd, err);
      if (sort_levels (t, c) != BL_OK)
        return fail_nomem (rd, err);
    } else if (!c->num && decide (t, c, COL_NUM) != BL_OK)
      return fail_nomem (rd, err);
  }
  return BL_OK;
}

/* Move the unparsed tail [POS, len) to the front of the buffer, grow the buffer when the
   tail fills it, and read more. */
static int
refill (reader *rd, size_t pos, bl_err *err)
{
  int st;
  if (pos > 0) {
    memmove (rd->buf, rd->buf + pos, rd->len - pos);
    rd->len -= pos;
  }
  if (rd->len == rd->cap) {
    char *b;
    if (rd->cap > (SIZE_MAX - 1) / 2)
      return fail_nomem (rd, err);
    b = bl_realloc (rd->buf, 2 * rd->cap + 1);
    if (!b)
      return fail_nomem (rd, err);
    rd->buf = b;
    rd->cap *= 2;
  }
  while (!rd->eof && rd->len < rd->cap) {
    size_t want = rd->cap - rd->len;
    size_t got;
    if (want > READ_CHUNK)
      want = READ_CHUNK;
    got = bl_source_read (rd->src, rd->buf + rd->len, want, &st, err);
    if (st != BL_OK)
      return st;
    if (got == 0)
      rd->eof = 1;
    rd->len += got;
  }
  return BL_OK;
}

static int
ends_with_tsv (const char *name)
{
  static const char *const suffix[] = { ".tsv", ".tsv.gz" };
  const size_t len = strlen (name);
  for (size_t k = 0; k < 2; k++) {
    const size_t m = strlen (suffix[k]);
    size_t i;
    if (len < m)
      continue;
    for (i = 0; i < m; i++) {
      char c = name[len - m + i];
      if (c >= 'A' && c <= 'Z')
        c = (char) (c - 'A' + 'a');
      if (c != suffix[k][i])
        break;
    }
    if (i == m)
      return 1;
  }
  return 0;
}

static bl_table *
read_source (bl_source *src, const bl_table_opts *opt_in, bl_err *err)
{
  bl_table_opts defaults;
  const bl_table_opts *opt = opt_in;
  reader rd;
  bl_table *t;
  size_t pos = 0, line = 1, pending = 0, pending_line = 0;
  int have_header = 0, st;

  if (!opt) {
    bl_table_opts_init (&defaults);
    opt = &defaults;
  }
  memset (&rd, 0, sizeof rd);
  rd.src = src;
  rd.name = bl_source_name (src);
  rd.delim = opt->delimiter ? opt->delimiter : ends_with_tsv (rd.name) ? '\t' : ',';
  rd.mark = opt->decimal_comma ? ',' : '.';
  rd.max_levels = opt->max_levels < INT32_MAX ? opt->max_levels : INT32_MAX;
  rd.fmax = SIZE_MAX;
  if (rd.delim == '"' || rd.delim == '\n' || rd.delim == '\r' || rd.delim == '\0') {
    bl_fail (err, BL_ESPEC, rd.name, "delimiter 0x%02x cannot separate fields",
             (unsigned) (unsigned char) rd.delim);
    return NULL;
  }
  if (opt->decimal_comma && rd.delim == ',') {
    bl_fail (err, BL_ESPEC, rd.name, "a decimal comma needs a delimiter other than ','");
    return NULL;
  }
  rd.stop[(unsigned char) rd.delim] = 1;
  rd.stop['\n'] = rd.stop['\r'] = rd.stop[0] = 1;

  t = bl_calloc (1, sizeof *t);
  if (!t || !(t->source = bl_strdup (rd.name))) {
    bl_free (t);
    fail_nomem (&rd, err);
    return NULL;
  }
  rd.cap = READ_CHUNK;
  rd.buf = bl_malloc (rd.cap + 1);
  if (!rd.buf) {
    fail_nomem (&rd, err);
    goto fail;
  }
  if (refill (&rd, 0, err) != BL_OK)
    goto fail;
  if (rd.len >= 3 && memcmp (rd.buf, "\xef\xbb\xbf", 3) == 0)
    pos = 3;                    /* a UTF-8 byte order mark */

  for (;;) {
    char *p = rd.buf + pos;
    const char *const end = rd.buf + rd.len;
    size_t nf, next_line = line;
    if (p == end) {
      if (rd.eof)
        break;
      if (refill (&rd, pos, err) != BL_OK)
        goto fail;
      pos = 0;
      continue;
    }
    if (*p == '\n' || *p == '\r') {
      /* An empty line: a record of one empty field, unless only empty lines follow. */
      st = line_end (&rd, &p, rd.buf + rd.len, line, 1, err);
      if (st == REC_ERR)
        goto fail;
      if (st == REC_DONE) {
        if (pending++ == 0)
          pending_line = line;
        line++;
        pos = (size_t) (p - rd.buf);
        continue;
      }
    } else {
      if (pending) {
        if (!have_header) {
          fail_at (&rd, err, pending_line, 0, "no header row: the first line is empty");
          goto fail;
        }
        for (; pending; pending--, pending_line++) {
          rd.f[0].s = p;
          rd.f[0].n = 0;
          rd.f[0].line = pending_line;
          rd.f[0].dquote = 0;
          if (add_record (&rd, t, 1, pending_line, err) != BL_OK)
            goto fail;
        }
      }
      st = parse_record (&rd, &p, &next_line, &nf, err);
      if (st == REC_ERR)
        goto fail;
      if (st == REC_DONE) {
        if (!have_header) {
          if (take_header (&rd, t, nf, opt, err) != BL_OK)
            goto fail;
          have_header = 1;
        } else if (add_record (&rd, t, nf, line, err) != BL_OK)
          goto fail;
        line = next_line;
        pos = (size_t) (p - rd.buf);
        continue;
      }
    }
    /* REC_MORE */
    if (refill (&rd, pos, err) != BL_OK)
      goto fail;
    pos = 0;
  }
  if (!have_header) {
    bl_fail (err, BL_EDATA, rd.name, "no header row");
    goto fail;
  }
  if (finish (&rd, t, err) != BL_OK)
    goto fail;
  bl_free (rd.buf);
  bl_free (rd.f);
  return t;

fail:
  bl_free (rd.buf);
  bl_free (rd.f);
  table_free_parts (t);
  return NULL;
}

/* ------------------------------------------------------------------ public */

void
bl_table_opts_init (bl_table_opts *opt)
{
  opt->delimiter = 0;
  opt->decimal_comma = 0;
  opt->categorical = NULL;
  opt->n_categorical = 0;
  opt->max_levels = BL_TABLE_MAX_LEVELS;
}

bl_table *
bl_table_read (const char *path, const bl_table_opts *opt, bl_err *err)
{
  bl_table *t;
  bl_source *src = bl_source_open (path, err);
  if (!src)
    return NULL;
  t = read_source (src, opt, err);
  bl_source_free (src);
  return t;
}

bl_table *
bl_table_read_mem (const void *buf, size_t len, const char *name, const bl_table_opts *opt,
                   bl_err *err)
{
  bl_table *t;
  bl_source *src = bl_source_open_mem (buf, len, name, err);
  if (!src)
    return NULL;
  t = read_source (src, opt, err);
  bl_source_free (src);
  return t;
}

const char *
bl_table_source (const bl_table *t)
{
  return t->source;
}

size_t
bl_table_nrows (const bl_table *t)
{
  return t->nrows;
}

size_t
bl_table_ncols (const bl_table *t)
{
  return t->ncols;
}

const char *
bl_table_colname (const bl_table *t, size_t j)
{
  return j < t->ncols ? t->names.str[j] : NULL;
}

long
bl_table_find (const bl_table *t, const char *name)
{
  const dict *d = &t->names;
  const size_t n = strlen (name);
  const uint32_t h = hash_bytes (name, n);
  size_t mask, k;
  if (!d->nslot)
    return -1;
  mask = d->nslot - 1;
  for (k = h & mask; d->slot[k]; k = (k + 1) & mask) {
    const size_t i = d->slot[k] - 1;
    if (d->hash[i] == h && d->len[i] == n && memcmp (d->str[i], name, n) == 0)
      return (long) i;
  }
  return -1;
}

int
bl_table_is_numeric (const bl_table *t, size_t j)
{
  return j < t->ncols && t->cols[j].type == COL_NUM;
}

const double *
bl_table_num (const bl_table *t, size_t j)
{
  return j < t->ncols && t->cols[j].type == COL_NUM ? t->cols[j].num : NULL;
}

const int32_t *
bl_table_codes (const bl_table *t, size_t j)
{
  return j < t->ncols && t->cols[j].type == COL_CAT ? t->cols[j].codes : NULL;
}

size_t
bl_table_nlevels (const bl_table *t, size_t j)
{
  return j < t->ncols && t->cols[j].type == COL_CAT ? t->cols[j].lev.n : 0;
}

const char *
bl_table_level (const bl_table *t, size_t j, size_t k)
{
  if (j >= t->ncols || t->cols[j].type != COL_CAT || k >= t->cols[j].lev.n)
    return NULL;
  return t->cols[j].lev.str[k];
}

size_t
bl_table_line (const bl_table *t, size_t row)
{
  return row < t->nrows ? t->line[row] : 0;
}
