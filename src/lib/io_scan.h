/* io_scan.h -- number scanning for the reader (internal, not installed): the decimal grammar,
   digits eight at a time (SWAR), the common cell from one 16-byte SSE2 load, Clinger's fast
   path, and strtod for the rest.  Everything here is static inline: the record loops of
   io_record.c and io_parallel.c call it once per cell, and inlining it there is what makes
   them fast.  Layer: io (the lowest; uses only the reader's settings). */
#ifndef BALLAST_IO_SCAN_H
#define BALLAST_IO_SCAN_H
#include <errno.h>
#include <float.h>
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#ifdef __SSE2__
#include <emmintrin.h>
#endif
#include "io_reader.h"

/* Nonzero when S (N bytes, S[N] writable) is a form strtod reads as a number but the grammar
   refuses (hex, infinity, nan; io_scan.c). */
int bl_io_strtod_would_take (char *s, size_t n);

enum { NUM_OK, NUM_NOT, NUM_OVERFLOW, NUM_LOCALE };

/* 10^k for k = 0..8, as integers. */
static const uint64_t pow10_u8[9] = { 1, 10, 100, 1000, 10000, 100000, 1000000, 10000000,
                                      100000000 };

/* Exact powers of ten 1e0..1e22: every one is a double exactly (5^22 < 2^53). */
static const double pow10_exact[23] = {
  1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11,
  1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22
};


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
static inline int
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
   (the digit words read up to byte 18).  Returns 0, with nothing read, for anything else;
   otherwise moves *PP to the cell end and sets *X to what scan_number gives (the same digits, the same one
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

#endif
