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
#ifdef __SSE2__
#include <emmintrin.h>
#endif
#include "alloc.h"
#include "source.h"
#include "table.h"
#include "thread.h"

/* Bytes asked of the source per read; also the initial buffer size. */
#define READ_CHUNK ((size_t) 1 << 20)
/* Rows allocated at the first data record; capacity doubles after that. */
#define ROWS_INIT ((size_t) 1024)
/* Buffers of READ_CHUNK bytes that a gzip producer thread may inflate ahead. */
#define SOURCE_RING 4
/* Longest excerpt of a bad cell quoted in a message. */
#define CELL_QUOTE_MAX 60

enum { COL_UNDECIDED, COL_NUM, COL_CAT, COL_SKIP };   /* SKIP: not kept (bl_table_opts.keep) */
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
  int frozen;                 /* a worker writes into the arrays: they must not move */
  size_t ndecided;            /* columns whose type is known (the fast record path needs all) */
  size_t est_rows;            /* rows the whole input probably holds (0: unknown): the next
                                 growth goes straight there instead of doubling */
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
  size_t max_record;          /* bl_table_opts.max_record */
  size_t total;               /* bytes read from the source so far */
  size_t size_hint;           /* exact input size when known in advance (plain files), else 0 */
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
/* 10^k for k = 0..8, as integers. */
static const uint64_t pow10_u8[9] = { 1, 10, 100, 1000, 10000, 100000, 1000000, 10000000,
                                      100000000 };

static const double pow10_exact[23] = {
  1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11,
  1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22
};

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

/* A run of decimal digits at *PP: appends their value to *W (w = 10^k w + digits; wraps
   for long runs, which the caller refuses by the count), adds their number to *N and moves
   *PP past them.  Eight bytes at a time where the buffer allows (little-endian SWAR: no
   branch per digit; the multiply form of Lemire 2018, "Quickly parsing eight digits",
   lemire.me/blog, from memory), byte by byte near its end. */
static inline void
digit_run (const char **pp, const char *end, uint64_t *w, size_t *n)
{
  const char *p = *pp;
  uint64_t v = *w;
#if defined(__BYTE_ORDER__) && __BYTE_ORDER__ == __ORDER_LITTLE_ENDIAN__
  while (end - p >= 8) {
    uint64_t x, mask;
    size_t k;
    memcpy (&x, p, 8);
    x ^= 0x3030303030303030u;     /* a digit byte becomes 0..9 */
    /* high bit of each byte that is not a digit (x >= 10); carries only move upwards, past
       the first such byte, which is the one counted */
    mask = ((x + 0x7676767676767676u) | x) & 0x8080808080808080u;
    k = mask ? (size_t) __builtin_ctzll (mask) / 8 : 8;
    if (k > 0) {
      uint64_t d = x << (8 * (8 - k));  /* the k digits in the top bytes, zeros below */
      d = (d * 10) + (d >> 8);
      d = (((d & 0x000000FF000000FFu) * (100 + (1000000ULL << 32)))
           + (((d >> 16) & 0x000000FF000000FFu) * (1 + (10000ULL << 32)))) >> 32;
      v = v * pow10_u8[k] + d;
      *n += k;
      p += k;
    }
    if (k < 8) {
      *pp = p;
      *w = v;
      return;
    }
  }
#endif
  for (; p < end && (unsigned) (*p - '0') < 10; p++, (*n)++)
    v = 10 * v + (uint64_t) (*p - '0');
  *pp = p;
  *w = v;
}

enum { SCAN_FAST, SCAN_SLOW, SCAN_NOT };

/* Read the decimal number at *PP with decimal mark MARK, up to the first byte that is not
   part of it (no blanks; END bounds the reading).  Grammar:
   [+-]? (D+ (MARK D*)? | MARK D+) ([eE] [+-]? D+)?.  Returns SCAN_NOT when no number starts
   here; else *PP moves past it and the result is SCAN_FAST, with the value in *OUT, or
   SCAN_SLOW when the value needs strtod.

   Clinger's fast path (Clinger 1990, "How to read floating point numbers accurately", Proc.
   ACM PLDI, 92-101): when the digits form an integer w < 10^15 (exact in a double; here
   counted with leading zeros, which only sends a few more numbers to strtod) and the decimal
   exponent e satisfies |e| <= 22 (10^|e| exact), w * 10^e or w / 10^-e is one correctly
   rounded IEEE operation on exact operands, hence equal to the correctly rounded value that
   strtod returns.  It needs double arithmetic without excess precision (FLT_EVAL_METHOD 0,
   as on x86-64 SSE and aarch64); elsewhere every number is SCAN_SLOW. */
static inline int
scan_number (const char **pp, const char *end, char mark, double *out)
{
  const char *p = *pp;
  uint64_t w = 0;
  size_t nint = 0, nfrac = 0;
  int neg = 0, fast = 1;
  long e10;
  if (p < end) {                /* without a branch: signs come in no predictable order */
    neg = *p == '-';
    p += neg | (*p == '+');
  }
  digit_run (&p, end, &w, &nint);
  if (p < end && *p == mark) {
    p++;
    digit_run (&p, end, &w, &nfrac);
  }
  if (nint + nfrac == 0)
    return SCAN_NOT;
  e10 = -(long) nfrac;
  if (p < end && (*p == 'e' || *p == 'E')) {
    int eneg = 0;
    long ex = 0;
    p++;
    if (p < end && (*p == '+' || *p == '-'))
      eneg = *p++ == '-';
    if (p == end || (unsigned) (*p - '0') >= 10)
      return SCAN_NOT;
    for (; p < end && (unsigned) (*p - '0') < 10; p++)
      if (ex < 100000)          /* beyond this strtod decides (overflow or zero) */
        ex = 10 * ex + (*p - '0');
    e10 += eneg ? -ex : ex;
  }
  *pp = p;
#if defined(FLT_EVAL_METHOD) && FLT_EVAL_METHOD == 0
  if (nint + nfrac > 15)
    fast = 0;                   /* w may have wrapped: unused */
  else if (w == 0)
    *out = neg ? -0.0 : 0.0;
  else if (e10 >= -22 && e10 <= 22) {
    const double v = e10 < 0 ? (double) w / pow10_exact[-e10] : (double) w * pow10_exact[e10];
    *out = copysign (v, neg ? -1.0 : 1.0);
  } else
    fast = 0;
#else
  fast = 0;
  (void) neg, (void) out;
#endif
  return fast ? SCAN_FAST : SCAN_SLOW;
}

/* Parse the decimal number S (N bytes, no surrounding blanks; S[N] is writable) with decimal
   mark MARK: scan_number, then strtod for what its fast path does not take (glibc's strtod
   is correctly rounded in the C locale).

   With TMP non-NULL, S is left untouched: the strtod path works on a copy in TMP (TMP_CAP
   bytes), and a cell too long for it is NUM_NOT (the parallel parser then falls back). */
static int
parse_number (char *s, size_t n, char mark, double *out, char *tmp, size_t tmp_cap)
{
  const char *p = s;
  const int k = scan_number (&p, s + n, mark, out);
  if (k == SCAN_NOT || p != s + n)
    return NUM_NOT;
  if (k == SCAN_FAST)
    return NUM_OK;
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
      if (nf == BL_TABLE_MAX_COLS) {    /* only the header is read with fmax unbounded */
        char msg[96];
        snprintf (msg, sizeof msg, "the header has more than %d columns (the limit)",
                  BL_TABLE_MAX_COLS);
        fail_at (rd, err, ln, 0, msg);
        return REC_ERR;
      }
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
/* Make room for CAP rows in every array of T.  (Transparent huge pages were tried here:
   about 5% faster on a 160 MB file, but a parallel step's worst-case reservation of one row
   per NCOLS bytes then made a file of one 100 MB line take 560 MB instead of 100.) */
static int
grow_to (bl_table *t, size_t cap)
{
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

/* Room for at least NEED rows (NEED > t->cap): to the estimate of the whole input's rows
   when it covers NEED and an eighth more than now (and memory allows), else twice as many
   (or NEED, when larger).  The estimate is used once; the next refill makes a new one. */
static int
grow_rows_to (bl_table *t, size_t need)
{
  size_t cap = t->cap ? 2 * t->cap : ROWS_INIT;
  if (t->est_rows >= need && t->est_rows - t->cap >= t->cap / 8) {
    const size_t est = t->est_rows;
    t->est_rows = 0;
    if (grow_to (t, est) == BL_OK)
      return BL_OK;
  }
  if (cap < need)
    cap = need;
  return grow_to (t, cap);
}

/* Room for one more row. */
static int
grow_rows (bl_table *t)
{
  return grow_rows_to (t, t->cap + 1);
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
  t->ndecided++;
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

/* The end of cell J of NC at *PP: the delimiter (moved past) before the last cell, a line
   end ("\n" or "\r\n", moved past) after it.  0 for anything else, or the buffer's end. */
static inline int
cell_end (const char **pp, const char *end, char delim, size_t j, size_t nc)
{
  const char *p = *pp;
  if (p == end)
    return 0;
  if (j + 1 < nc) {
    if (*p != delim)
      return 0;
    *pp = p + 1;
    return 1;
  }
  if (*p == '\n') {
    *pp = p + 1;
    return 1;
  }
  if (*p == '\r' && p + 1 < end && p[1] == '\n') {
    *pp = p + 2;
    return 1;
  }
  return 0;
}

#if defined(__SSE2__) && defined(FLT_EVAL_METHOD) && FLT_EVAL_METHOD == 0
/* The value of the K digits (1 <= K <= 8) at Q, read as one little-endian word: the
   multiply form of digit_run. */
static inline uint64_t
digits8 (const char *q, unsigned k)
{
  uint64_t x;
  memcpy (&x, q, 8);
  x = (x ^ 0x3030303030303030u) << (8 * (8 - k));
  x = (x * 10) + (x >> 8);
  return (((x & 0x000000FF000000FFu) * (100 + (1000000ULL << 32)))
          + (((x >> 16) & 0x000000FF000000FFu) * (1 + (10000ULL << 32)))) >> 32;
}

/* The common number cell, [+-]? D{0,8} (MARK D{0,8})? with at least one digit, ended by
   the delimiter or a line end within its first 16 bytes (so at most 14 digits in all:
   w < 10^15, as Clinger's fast path needs), read from one 16-byte load: the digits, the mark
   and the cell end are found by SSE2 compares at once instead of a byte chain (the position
   of each cell then no longer waits on the digits before it).  Needs 24 bytes before END
   (the digit words read up to byte 18).  Returns 0, with nothing read, for anything else; otherwise moves
   *PP to the cell end and sets *X to what scan_number gives (the same digits, the same one
   division by the same exact power of ten: Clinger's fast path), so it is only faster. */
static inline int
scan16 (const char **pp, const char *end, const reader *rd, double *x)
{
  const char *const p = *pp;
  __m128i v, d;
  unsigned digit, mark, stop, nd, s, i1, i2, n1, n2;
  uint64_t w;
  if (end - p < 24)
    return 0;
  v = _mm_loadu_si128 ((const __m128i *) p);
  d = _mm_sub_epi8 (v, _mm_set1_epi8 ('0'));
  /* a digit byte d = c - '0' is 0..9, so min (d, 9) == d (unsigned) */
  digit = (unsigned) _mm_movemask_epi8 (_mm_cmpeq_epi8 (_mm_min_epu8 (d, _mm_set1_epi8 (9)), d));
  mark = (unsigned) _mm_movemask_epi8 (_mm_cmpeq_epi8 (v, _mm_set1_epi8 (rd->mark)));
  stop = (unsigned) _mm_movemask_epi8 (
    _mm_or_si128 (_mm_or_si128 (_mm_cmpeq_epi8 (v, _mm_set1_epi8 (rd->delim)),
                                _mm_cmpeq_epi8 (v, _mm_set1_epi8 ('\n'))),
                  _mm_cmpeq_epi8 (v, _mm_set1_epi8 ('\r'))));
  s = (unsigned) (p[0] == '-') | (unsigned) (p[0] == '+');
  nd = ~digit & 0xFFFFu & ~((1u << s) - 1);     /* non-digits from the first digit on */
  i1 = (unsigned) __builtin_ctz (nd | 0x10000u);
  i2 = i1;
  n1 = i1 - s;
  n2 = 0;
  if (i1 < 16 && ((mark >> i1) & 1)) {
    i2 = (unsigned) __builtin_ctz ((nd & (nd - 1)) | 0x10000u);
    n2 = i2 - i1 - 1;
  }
  if (i2 >= 16 || !((stop >> i2) & 1) || n1 + n2 == 0 || n1 > 8 || n2 > 8 || n1 + n2 > 15)
    return 0;
  w = n1 ? digits8 (p + s, n1) : 0;
  if (n2)
    w = w * pow10_u8[n2] + digits8 (p + i1 + 1, n2);
  if (w == 0)
    *x = p[0] == '-' ? -0.0 : 0.0;
  else {
    const double y = n2 ? (double) w / pow10_exact[n2] : (double) w;
    *x = copysign (y, p[0] == '-' ? -1.0 : 1.0);
  }
  *pp = p + i2;
  return 1;
}
#else
static inline int
scan16 (const char **pp, const char *end, const reader *rd, double *x)
{
  (void) pp, (void) end, (void) rd, (void) x;
  return 0;
}
#endif

/* The numeric cell at *P in one pass: NaN for an empty cell, else what scan_number converts
   by its fast path (scan16 first, for the common form).  0 when the cell needs the general
   path. */
static inline int
fast_cell (const char **pp, const char *end, const reader *rd, double *x)
{
  const char *p = *pp;
  if (p < end && (*p == rd->delim || *p == '\n' || *p == '\r')) {
    *x = NAN;                   /* empty: missing (is_missing) */
    return 1;
  }
  if (scan16 (pp, end, rd, x))
    return 1;
  return scan_number (pp, end, rd->mark, x) == SCAN_FAST;
}

/* The common record in one pass (the general path reads every byte twice: once to find the
   cells, once to convert them).  Taken when every column's type is known, no cell is quoted,
   every numeric cell is empty or a number that parse_number converts by its fast path, and
   the record has NC cells and ends in a line end inside the buffer: then row t->nrows is
   written as add_record would write it, *TAKEN is 1 and *PP moves past the line end.
   Otherwise *TAKEN is 0 and nothing is counted (cells of the row may have been written; the
   general path then reads the record from its start and writes them again).  Categorical
   cells go through put_cell, so levels, limits and errors are those of the general path;
   returns its status. */
static int
fast_record (reader *rd, bl_table *t, char **pp, const char *end, size_t line, int *taken,
             bl_err *err)
{
  const size_t r = t->nrows, nc = t->ncols;
  const char *p = *pp;
  *taken = 0;
  if (r == t->cap || t->ndecided != nc)
    return BL_OK;
  for (size_t j = 0; j < nc; j++) {
    column *const c = &t->cols[j];
    if (c->type == COL_NUM) {
      double x;
      if (!fast_cell (&p, end, rd, &x) || !cell_end (&p, end, rd->delim, j, nc))
        return BL_OK;
      c->num[r] = x;
    } else {
      field f;
      int st;
      if (p < end && *p == '"')
        return BL_OK;
      f.s = (char *) p;
      while (p < end && !rd->stop[(unsigned char) *p])
        p++;
      f.n = (size_t) (p - f.s);
      f.line = line;
      f.dquote = 0;
      if (!cell_end (&p, end, rd->delim, j, nc))
        return BL_OK;
      if ((st = put_cell (rd, t, j, &f, err)) != BL_OK)
        return st;
    }
  }
  if ((size_t) (p - *pp) > rd->max_record)
    return BL_OK;               /* the general path refuses it */
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
    return fail_at (rd, err, line, 0, msg);
  }
  if (r == t->cap) {
    if (t->frozen)              /* cannot happen: par_step reserved enough rows */
      return bl_fail (err, BL_EINTERNAL, rd->name, "row capacity reached in a parallel step");
    if (grow_rows (t) != BL_OK)
      return fail_nomem (rd, err);
  }
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
    if (t->cols[j].type != COL_CAT) {   /* declared: decided (counted once) */
      t->cols[j].type = COL_CAT;
      t->ndecided++;
    }
  }
  if (opt->keep)                /* the columns not asked for are skipped */
    for (size_t j = 0; j < nf; j++) {
      size_t k;
      for (k = 0; k < opt->n_keep && strcmp (opt->keep[k], t->names.str[j]) != 0; k++)
        ;
      if (k == opt->n_keep) {
        if (t->cols[j].type == COL_UNDECIDED)
          t->ndecided++;
        t->cols[j].type = COL_SKIP;
      }
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
    } else if (c->type == COL_NUM && !c->num && decide (t, c, COL_NUM) != BL_OK)
      return fail_nomem (rd, err);
  }
  return BL_OK;
}

/* Move the unparsed tail [POS, len) to the front of the buffer, grow the buffer when the
   tail fills it, and read more.  When the input's size is known, the rows of table T so far
   over the bytes they took, scaled to the whole input, tell where the next growth of the row
   arrays should go (one or two growths instead of a doubling every time: no copies, no
   slack). */
static int
refill (reader *rd, bl_table *t, size_t pos, size_t line, bl_err *err)
{
  int st;
  if (t && rd->size_hint > 0 && t->nrows >= 256 && rd->total > rd->len - pos) {
    const double est = (double) t->nrows * (double) rd->size_hint
                       / (double) (rd->total - (rd->len - pos));
    t->est_rows = est < 1e15 ? (size_t) (est * 1.02) + 1024 : 0;
  }
  if (pos > 0) {
    memmove (rd->buf, rd->buf + pos, rd->len - pos);
    rd->len -= pos;
  }
  if (rd->len == rd->cap) {
    char *b;
    /* the unread record fills the buffer: it may grow to the limit, no further */
    if (rd->cap >= rd->max_record) {
      char msg[160];
      snprintf (msg, sizeof msg, "a record longer than %zu bytes starts here (the limit on "
                "one record)", rd->max_record);
      return fail_at (rd, err, line, 0, msg);
    }
    if (rd->cap > (SIZE_MAX - 1) / 2)
      return fail_nomem (rd, err);
    b = bl_realloc (rd->buf, 2 * rd->cap + 1);
    if (!b)
      return fail_nomem (rd, err);
    rd->buf = b;
    rd->cap *= 2;
  }
  const size_t len0 = rd->len;
  while (!rd->eof && rd->len < rd->cap) {
    size_t want = rd->cap - rd->len;
    size_t got;
    if (want > READ_CHUNK)
      want = READ_CHUNK;
    got = bl_source_read (rd->src, rd->buf + rd->len, want, &st, err);
    /* A failure after some new bytes waits: the bytes are parsed first and the source
       repeats its failure on the next read, so errors come in the order of the bytes,
       whatever the step sizes (the same error on one thread and on two). */
    if (st != BL_OK)
      return rd->len > len0 ? BL_OK : st;
    if (got == 0)
      rd->eof = 1;
    rd->len += got;
    rd->total += got;
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

/* Where the record loop stands: the next byte to parse, its line, and the empty lines seen
   since the last record (they become one-field records only if another record follows). */
typedef struct pstate {
  size_t pos, line, pending, pending_line;
  int have_header;
} pstate;

/* Parse every complete record in [ps->pos, rd->len).  Returns BL_CONTINUE when the buffer
   ends (at its end, or at the start of a record that needs more bytes; ps->pos is there),
   BL_OK right after the header was taken when HEADER_ONLY is set, or another code with ERR
   filled. */
static int
parse_avail (reader *rd, bl_table *t, const bl_table_opts *opt, pstate *ps, int header_only,
             bl_err *err)
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
        return fail_at (rd, err, ps->pending_line, 0, "no header row: the first line is empty");
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
    st = parse_record (rd, &p, &next_line, &nf, err);
    if (st == REC_ERR)
      return BL_EDATA;
    if (st == REC_MORE)
      return BL_CONTINUE;
    if ((size_t) (p - (rd->buf + ps->pos)) > rd->max_record) {
      char msg[160];
      snprintf (msg, sizeof msg, "a record longer than %zu bytes starts here (the limit on "
                "one record)", rd->max_record);
      return fail_at (rd, err, ps->line, 0, msg);
    }
    if (!ps->have_header) {
      if ((st = take_header (rd, t, nf, opt, err)) != BL_OK)
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
   records where each cell is, and the merge feeds those cells through put_cell in row
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

/* Longest numeric cell the worker converts through strtod (longer: sequential). */
#define SPEC_NUM_MAX 128
/* While fewer rows than this are read, a step whose columns are not all typed first parses a
   slice sequentially (par_step). */
#define SPEC_DECIDE_ROWS 4096
/* Parts shorter than this are parsed sequentially: a thread costs more than it saves. */
#define SPEC_MIN ((size_t) 64 << 10)

typedef struct spec {
  reader rd;                  /* the worker's reader over the second part */
  size_t first_nl;            /* line feeds of the first part, counted before the worker
                                 starts: the caller parses that part in place (writing NULs
                                 over cell ends for strtod), so the worker must not read it */
  size_t ncols;
  int *type;                  /* column types when the worker started */
  double **num;               /* per column: the table's array (NUM), or NULL */
  size_t *line;               /* the table's line array */
  size_t base, cap;           /* table rows before the step; rows reserved */
  field **raw;                /* per column: located cells (line relative to the split) */
  size_t rows_cap;            /* rows every raw array holds */
  size_t rows;                /* rows the worker may fill in this step (<= rows_cap) */
  size_t off;                 /* the worker's first row: base + line feeds of the first part */
  size_t line0;               /* the split's line, as the first part's line feeds predict
                                 (the worker's lines are absolute from it) */
  size_t nrows, lines;        /* records parsed, lines consumed */
  int ok;                     /* the whole part was taken */
  int all_decided;            /* every type known: the one-pass record form applies */
  /* The worker thread, started at the first parallel step of a read and kept until its end
     (one thread per read, not one per step): each step is one task of the partner
     (thread.h), whose hand-over orders every write to W before the worker reads it, and the
     worker's rows before the merge. */
  bl_partner partner;
} spec;

static void
spec_free (spec *w)
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
spec_prepare (spec *w, const reader *rd, bl_table *t, size_t rows1, size_t rows2)
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
  if (t->cap < t->nrows + rows1 + rows && grow_rows_to (t, t->nrows + rows1 + rows) != BL_OK)
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
  spec *w = arg;
  reader *rd = &w->rd;
  char *p = rd->buf;
  char *const end = rd->buf + rd->len;
  size_t line = 0, r, nl = 0, lim;
  char tmp[SPEC_NUM_MAX];
  bl_err scratch;             /* parse_record's messages, never shown */
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
      if (parse_record (rd, &p, &next, &nf, &scratch) != REC_DONE || nf != w->ncols
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
spec_begin (spec *w)
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
spec_merge (reader *rd, bl_table *t, const spec *w, size_t base_line, bl_err *err)
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
        if ((st = put_cell (rd, t, j, &f, err)) != BL_OK)
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
static int
par_step (reader *rd, bl_table *t, const bl_table_opts *opt, pstate *ps, spec *w,
          size_t min_part, bl_err *err)
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
     input) a first slice goes sequentially, so that the first records decide the types. */
  if (t->ndecided < t->ncols && t->nrows < SPEC_DECIDE_ROWS) {
    const char *cut = memchr (buf + ps->pos + min_part / 4, '\n', end - ps->pos - min_part / 4);
    if (cut) {
      save_len = rd->len;
      save_eof = rd->eof;
      rd->len = (size_t) (cut + 1 - buf);
      rd->eof = 0;
      st = parse_avail (rd, t, opt, ps, 0, err);
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
      return fail_nomem (rd, err);
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
  st = parse_avail (rd, t, opt, ps, 0, err);
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
  st = parse_avail (rd, t, opt, ps, 0, err);
  return st == BL_CONTINUE ? BL_OK : st;
}

static bl_table *
read_source (bl_source *src, const bl_table_opts *opt_in, bl_err *err)
{
  bl_table_opts defaults;
  const bl_table_opts *opt = opt_in;
  reader rd;
  bl_table *t;
  pstate ps;
  spec w;
  size_t chunk, min_part, hint;
  int par, st;

  if (!opt) {
    bl_table_opts_init (&defaults);
    opt = &defaults;
  }
  memset (&rd, 0, sizeof rd);
  memset (&ps, 0, sizeof ps);
  memset (&w, 0, sizeof w);
  rd.src = src;
  rd.name = bl_source_name (src);
  rd.delim = opt->delimiter ? opt->delimiter : ends_with_tsv (rd.name) ? '\t' : ',';
  rd.mark = opt->decimal_comma ? ',' : '.';
  rd.max_levels = opt->max_levels < INT32_MAX ? opt->max_levels : INT32_MAX;
  rd.max_record = opt->max_record ? opt->max_record : BL_TABLE_MAX_RECORD;
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
  par = opt->threads >= 2;
  chunk = opt->chunk ? opt->chunk : BL_TABLE_CHUNK;
  if (chunk < 64)
    chunk = 64;
  /* For gzip input a step no larger than the producer's ring keeps both threads busy: the
     parser takes each buffer as soon as it is inflated (measured: 1.05x the time of zlib
     alone with 4 MiB steps, 1.4x with 8 MiB). */
  if (par && bl_source_is_gzip (src) && chunk > SOURCE_RING * READ_CHUNK)
    chunk = SOURCE_RING * READ_CHUNK;
  min_part = chunk / 4 < SPEC_MIN ? chunk / 4 : SPEC_MIN;

  t = bl_calloc (1, sizeof *t);
  if (!t || !(t->source = bl_strdup (rd.name))) {
    bl_free (t);
    fail_nomem (&rd, err);
    return NULL;
  }
  rd.cap = par ? chunk : READ_CHUNK;
  /* A small input needs no large buffer (the size is a hint: a longer one grows it). */
  hint = bl_source_size_hint (src);
  if (hint > 0 && hint < rd.cap)
    rd.cap = hint < 64 ? 64 : hint;
  if (!bl_source_is_gzip (src))
    rd.size_hint = hint;        /* exact for plain input (for gzip only a bound) */
  rd.buf = bl_malloc (rd.cap + 1);
  if (!rd.buf) {
    fail_nomem (&rd, err);
    goto fail;
  }
  if (refill (&rd, t, 0, 1, err) != BL_OK)
    goto fail;
  if (par && !rd.eof && bl_source_is_gzip (src)
      && bl_source_prefetch (src, SOURCE_RING, hint > 0 && hint < READ_CHUNK ? hint : READ_CHUNK,
                             err) != BL_OK)
    goto fail;
  ps.line = 1;
  if (rd.len >= 3 && memcmp (rd.buf, "\xef\xbb\xbf", 3) == 0)
    ps.pos = 3;                 /* a UTF-8 byte order mark */

  for (;;) {
    if (opt->cancel && *opt->cancel) {
      bl_fail (err, BL_ECANCEL, rd.name, "reading was cancelled");
      goto fail;
    }
    if (par && ps.have_header && !ps.pending
        && par_step (&rd, t, opt, &ps, &w, min_part, err) != BL_OK)
      goto fail;
    st = parse_avail (&rd, t, opt, &ps, par && !ps.have_header, err);
    if (st == BL_OK)
      continue;                 /* the header: the rest of the chunk may go in parallel */
    if (st != BL_CONTINUE)
      goto fail;
    if (rd.eof)
      break;
    if (refill (&rd, t, ps.pos, ps.line, err) != BL_OK)
      goto fail;
    ps.pos = 0;
  }
  if (!ps.have_header) {
    bl_fail (err, BL_EDATA, rd.name, "no header row");
    goto fail;
  }
  if (finish (&rd, t, err) != BL_OK)
    goto fail;
  bl_free (rd.buf);
  bl_free (rd.f);
  spec_free (&w);
  return t;

fail:
  bl_free (rd.buf);
  bl_free (rd.f);
  spec_free (&w);
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
  opt->threads = BL_TABLE_THREADS;
  opt->cancel = NULL;
  opt->chunk = BL_TABLE_CHUNK;
  opt->keep = NULL;
  opt->n_keep = 0;
  opt->max_record = BL_TABLE_MAX_RECORD;
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
      return t->cols[i].type == COL_SKIP ? -1 : (long) i;
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
