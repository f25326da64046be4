/* check_table.c -- tests for table.c: CSV/TSV parsing, column types, numbers, errors. */
#include <check.h>
#include <errno.h>
#include <math.h>
#include <signal.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>
#include <zlib.h>
#include "alloc.h"
#include "error.h"
#include "table.h"
#include "testutil.h"

/* ------------------------------------------------------------------ helpers */

static bl_table *
read_str (const char *text, const bl_table_opts *opt, bl_err *err)
{
  return bl_table_read_mem (text, strlen (text), "mem.csv", opt, err);
}

/* Expect reading TEXT (as mem.csv) to fail with CODE, WHERE and a message holding FRAG. */
static void
expect_fail (const char *label, const char *text, const bl_table_opts *opt, int code,
             const char *where, const char *frag)
{
  bl_err err = { 0 };
  bl_table *t = read_str (text, opt, &err);
  ck_assert_msg (t == NULL, "%s: read succeeded", label);
  ck_assert_msg (err.code == code, "%s: code %d, want %d (%s: %s)", label, err.code, code,
                 err.where, err.msg);
  ck_assert_msg (strcmp (err.where, where) == 0, "%s: where '%s', want '%s'", label, err.where,
                 where);
  ck_assert_msg (strstr (err.msg, frag) != NULL, "%s: message '%s' lacks '%s'", label,
                 err.msg, frag);
}

static uint64_t
bits (double x)
{
  uint64_t u;
  memcpy (&u, &x, sizeof u);
  return u;
}

/* xorshift64 (Marsaglia 2003, J. Stat. Softw. 8(14)), fixed seed: reproducible inputs. */
static uint64_t
next_rand (uint64_t *s)
{
  *s ^= *s << 13;
  *s ^= *s >> 7;
  *s ^= *s << 17;
  return *s;
}


/* ------------------------------------------------------------------ parallel helpers */

/* Assert that A and B are the same table: shape, names, types, every numeric cell bit for
   bit, codes, levels and line numbers. */
static void
same_table (const char *label, const bl_table *a, const bl_table *b)
{
  const size_t n = bl_table_nrows (a), m = bl_table_ncols (a);
  ck_assert_msg (n == bl_table_nrows (b), "%s: nrows %zu vs %zu", label, n, bl_table_nrows (b));
  ck_assert_msg (m == bl_table_ncols (b), "%s: ncols", label);
  for (size_t i = 0; i < n; i++)
    ck_assert_msg (bl_table_line (a, i) == bl_table_line (b, i), "%s: line of row %zu: %zu vs "
                   "%zu", label, i, bl_table_line (a, i), bl_table_line (b, i));
  for (size_t j = 0; j < m; j++) {
    ck_assert_msg (strcmp (bl_table_colname (a, j), bl_table_colname (b, j)) == 0,
                   "%s: name %zu", label, j);
    ck_assert_msg (bl_table_is_numeric (a, j) == bl_table_is_numeric (b, j), "%s: type of %zu",
                   label, j);
    if (bl_table_is_numeric (a, j)) {
      const double *x = bl_table_num (a, j), *y = bl_table_num (b, j);
      for (size_t i = 0; i < n; i++)
        ck_assert_msg (bits (x[i]) == bits (y[i]), "%s: col %zu row %zu: %a vs %a", label, j,
                       i, x[i], y[i]);
    } else {
      const int32_t *x = bl_table_codes (a, j), *y = bl_table_codes (b, j);
      ck_assert_msg (bl_table_nlevels (a, j) == bl_table_nlevels (b, j), "%s: nlevels of %zu",
                     label, j);
      for (size_t k = 0; k < bl_table_nlevels (a, j); k++)
        ck_assert_msg (strcmp (bl_table_level (a, j, k), bl_table_level (b, j, k)) == 0,
                       "%s: col %zu level %zu", label, j, k);
      for (size_t i = 0; i < n; i++)
        ck_assert_msg (x[i] == y[i], "%s: col %zu row %zu: code %d vs %d", label, j, i, x[i],
                       y[i]);
    }
  }
}

/* A random pump-fleet CSV of about ROWS records: a numeric column (some cells missing,
   quoted, blank-padded, or with 17 digits for the strtod path), a categorical one (some
   levels quoted with "" pairs or a line feed), a free-text column whose quoted cells often
   span lines (so that many split points fall inside quotes), a column missing for its first
   LATE rows and numeric after, and one missing for its first LATE2 rows and labels after.
   Line ends are LF or, now and then, CRLF.  Returns malloc'ed text and its length. */
static char *
random_csv (uint64_t seed, size_t rows, size_t late, size_t late2, size_t *len)
{
  static const char *const site[] = { "north", "south", "east", "west", "dock \"B\"", "yard",
                                      "pier\n7", "hangar", "\xc3\xa9tang", "depot" };
  uint64_t s = seed;
  char *text = malloc (rows * 160 + 64), *p = text;
  ck_assert_ptr_nonnull (text);
  p += sprintf (p, "hours,site,note,late,kind\n");
  for (size_t i = 0; i < rows; i++) {
    const uint64_t r = next_rand (&s), q = next_rand (&s);
    const double x = (double) (r % 10000000) / 997.0;
    switch (r >> 60) {
    case 0: break;                                            /* empty: missing */
    case 1: p += sprintf (p, "NA"); break;
    case 2: p += sprintf (p, "\"%.3f\"", x); break;
    case 3: p += sprintf (p, " %.2f ", x); break;
    case 4: p += sprintf (p, "%.17g", x); break;
    default: p += sprintf (p, "%.4f", x); break;
    }
    *p++ = ',';
    {
      const char *lev = site[(q >> 8) % 10];
      if ((q >> 20) % 13 == 0)
        ;                                                     /* missing */
      else if (strchr (lev, '"') || strchr (lev, '\n') || (q >> 24) % 5 == 0) {
        *p++ = '"';
        for (const char *c = lev; *c; c++) {
          if (*c == '"')
            *p++ = '"';
          *p++ = *c;
        }
        *p++ = '"';
      } else
        p += sprintf (p, "%s", lev);
    }
    *p++ = ',';
    switch ((q >> 32) % 4) {
    case 0: break;
    case 1: p += sprintf (p, "ok %u", (unsigned) (q >> 40) % 100); break;
    default: {
      const unsigned nlines = 1 + (unsigned) ((q >> 36) % 4);
      *p++ = '"';
      for (unsigned k = 0; k < nlines; k++)
        p += sprintf (p, "%sleak, seal %u", k ? "\n" : "", (unsigned) ((q >> (40 + k)) % 50));
      *p++ = '"';
    }
    }
    *p++ = ',';
    if (i >= late && (r >> 8) % 7 != 0)
      p += sprintf (p, "%.1f", (double) ((r >> 12) % 1000) / 8.0);
    *p++ = ',';
    if (i >= late2 && (r >> 16) % 5 != 0)
      p += sprintf (p, "k%u", (unsigned) ((r >> 20) % 9));
    if ((q >> 50) % 11 == 0)
      *p++ = '\r';
    *p++ = '\n';
  }
  *p = '\0';
  *len = (size_t) (p - text);
  return text;
}

/* Read LEN bytes at TEXT sequentially and with two threads in steps of CHUNK bytes; both
   must succeed with the same table, or fail with the same code, where and message. */
static void
same_both_ways (const char *label, const void *text, size_t len, size_t chunk,
                const bl_table_opts *base)
{
  bl_table_opts o1, o2;
  bl_err e1 = { 0 }, e2 = { 0 };
  bl_table *a, *b;
  char lab[256];
  if (base)
    o1 = *base;
  else
    bl_table_opts_init (&o1);
  o2 = o1;
  o1.threads = 1;
  o2.threads = 2;
  o2.chunk = chunk;
  snprintf (lab, sizeof lab, "%s (chunk %zu)", label, chunk);
  a = bl_table_read_mem (text, len, "r.csv", &o1, &e1);
  b = bl_table_read_mem (text, len, "r.csv", &o2, &e2);
  ck_assert_msg ((a == NULL) == (b == NULL), "%s: sequential %s, parallel %s (%s: %s / %s: %s)",
                 lab, a ? "ok" : "failed", b ? "ok" : "failed", e1.where, e1.msg, e2.where,
                 e2.msg);
  if (a)
    same_table (lab, a, b);
  else {
    ck_assert_msg (e1.code == e2.code, "%s: code %d vs %d", lab, e1.code, e2.code);
    ck_assert_msg (strcmp (e1.where, e2.where) == 0, "%s: where '%s' vs '%s'", lab, e1.where,
                   e2.where);
    ck_assert_msg (strcmp (e1.msg, e2.msg) == 0, "%s: msg '%s' vs '%s'", lab, e1.msg, e2.msg);
  }
  bl_table_free (a);
  bl_table_free (b);
}

/* ------------------------------------------------------------------ reference */

START_TEST (table_rfc4180_quoting)
{
  /* RFC 4180 section 2: rule 6 (fields with line breaks, quotes and commas are quoted),
     rule 7 (a quote inside a quoted field is doubled).  Line numbers are physical lines. */
  static const char text[] =
    "site,note,hours\n"                       /* line 1 */
    "\"north, upper\",\"said \"\"stop\"\"\",2.385\n"  /* line 2 */
    "south,\"two\nlines\",11.07\n"            /* lines 3-4 */
    "east,\"\",0.5\n"                          /* line 5 */
    "west,\"a\r\nb\",7\n";                     /* lines 6-7 */
  bl_err err = { 0 };
  bl_table *t = read_str (text, NULL, &err);
  const int32_t *site, *note;
  const double *h;
  ck_assert_msg (t != NULL, "table_rfc4180_quoting: %s: %s", err.where, err.msg);
  ck_assert_uint_eq (bl_table_nrows (t), 4);
  ck_assert_uint_eq (bl_table_ncols (t), 3);
  ck_assert_int_eq (bl_table_is_numeric (t, 0), 0);
  site = bl_table_codes (t, 0);
  note = bl_table_codes (t, 1);
  h = bl_table_num (t, 2);
  ck_assert_ptr_nonnull (site);
  ck_assert_ptr_nonnull (h);
  ck_assert_str_eq (bl_table_level (t, 0, (size_t) site[0]), "north, upper");
  ck_assert_str_eq (bl_table_level (t, 1, (size_t) note[0]), "said \"stop\"");
  ck_assert_str_eq (bl_table_level (t, 1, (size_t) note[1]), "two\nlines");
  ck_assert_int_eq (note[2], -1);             /* "" is an empty, hence missing, cell */
  ck_assert_str_eq (bl_table_level (t, 1, (size_t) note[3]), "a\r\nb");
  ck_assert_msg (h[0] == 2.385 && h[1] == 11.07 && h[2] == 0.5 && h[3] == 7.0,
                 "table_rfc4180_quoting: hours");
  ck_assert_uint_eq (bl_table_line (t, 0), 2);
  ck_assert_uint_eq (bl_table_line (t, 1), 3);
  ck_assert_uint_eq (bl_table_line (t, 2), 5);
  ck_assert_uint_eq (bl_table_line (t, 3), 6);
  ck_assert_uint_eq (bl_table_line (t, 4), 0);    /* out of range */
  bl_table_free (t);
}
END_TEST

START_TEST (table_line_after_multiline)
{
  /* The cell on line 5 is named 5 although only 4 records precede it. */
  expect_fail ("line after multiline", "a,b\n1,\"x\ny\nz\"\n2,w\nkg,4\n", NULL, BL_EDATA,
               "mem.csv:6:1", "not a number: 'kg'");
  expect_fail ("column after multiline", "a,b\nq,1\n\"x\ny\",12.5kg\nr,3\n", NULL, BL_EDATA,
               "mem.csv:4:2", "'12.5kg'");
}
END_TEST

/* Hard cases for decimal-to-double conversion, with their IEEE 754 binary64 encodings
   (from memory; each also checked against Python float() and against strtod below). */
static const struct { const char *s; uint64_t bits; } hard[] = {
  /* 16 digits whose integer exceeds 2^53: (double) w / 10^k would round twice and differ
     (found with Python's correctly rounded float(); the bits are its results).  They come
     first, far from the input's end, so the one-load path (scan16) sees them. */
  { "93604450.34285249", 0x41965129895f14b9ULL },
  { "97514212.71140745", 0x41973fcb92d87b32ULL },
  { "93984085.27485041", 0x4196685555197263ULL },
  { "90617772.71609283", 0x41959adeb2dd4770ULL },
  { "9.666131954618309", 0x4023550f3f5fcff9ULL },
  { "9.440773102487241", 0x4022e1ad03184740ULL },
  { "-90617772.71609283", 0xc1959adeb2dd4770ULL },
  { "00000000.00000001", 0x3e45798ee2308c3aULL },
  { "0.1", 0x3fb999999999999aULL },
  { "1e23", 0x44b52d02c7e14af6ULL },                 /* not w * 10^e on the fast path */
  { "9007199254740993", 0x4340000000000000ULL },     /* 2^53 + 1: tie, to even */
  { "9007199254740995", 0x4340000000000002ULL },     /* 2^53 + 3: tie, to even (up) */
  { "2.2250738585072011e-308", 0x000fffffffffffffULL },  /* largest subnormal */
  { "2.2250738585072012e-308", 0x0010000000000000ULL },  /* smallest normal */
  { "4.9e-324", 0x0000000000000001ULL },
  { "2.4703282292062327e-324", 0x0ULL },             /* just below half the least: zero */
  { "2.4703282292062328e-324", 0x0000000000000001ULL },
  { "1e-400", 0x0ULL },                              /* underflow to zero is accepted */
  { "1.7976931348623157e308", 0x7fefffffffffffffULL },
  { "1.7976931348623158e308", 0x7fefffffffffffffULL },
  { "1e22", 0x4480f0cf064dd592ULL },
  { "1e-22", 0x3b5e392010175ee6ULL },
  { "-0", 0x8000000000000000ULL },
  { "3.14", 0x40091eb851eb851fULL },
  { "123456789012345678", 0x437b69b4ba630f35ULL },
  { "0.000000000000000000000000000001234", 0x39b9074b58c7cacaULL },
};

START_TEST (table_rounding_hard)
{
  char text[4096] = "x\n";
  bl_err err = { 0 };
  const size_t n = sizeof hard / sizeof hard[0];
  bl_table *t;
  const double *x;
  for (size_t i = 0; i < n; i++) {
    strcat (text, hard[i].s);
    strcat (text, "\n");
  }
  t = read_str (text, NULL, &err);
  ck_assert_msg (t != NULL, "table_rounding_hard: %s: %s", err.where, err.msg);
  x = bl_table_num (t, 0);
  ck_assert_ptr_nonnull (x);
  for (size_t i = 0; i < n; i++) {
    ck_assert_msg (bits (x[i]) == hard[i].bits, "table_rounding_hard '%s': got %a",
                   hard[i].s, x[i]);
    ck_assert_msg (bits (x[i]) == bits (strtod (hard[i].s, NULL)),
                   "table_rounding_hard '%s': differs from strtod", hard[i].s);
  }
  bl_table_free (t);
}
END_TEST

/* A random decimal: optional sign, 1-20 digits with the mark at a random place (or none),
   an optional exponent in -30..30.  MARK is written as the decimal point. */
static size_t
random_decimal (uint64_t *s, char *out, char mark)
{
  size_t k = 0;
  const uint64_t r = next_rand (s);
  const int ndig = 1 + (int) (r % 20), point = (int) ((r >> 8) % (uint64_t) (ndig + 2));
  if ((r >> 16) % 3 == 0)
    out[k++] = (r >> 18) & 1 ? '-' : '+';
  for (int i = 0; i < ndig; i++) {
    if (i == point && i > 0)
      out[k++] = mark;
    out[k++] = (char) ('0' + next_rand (s) % 10);
  }
  if (point == ndig)
    out[k++] = mark;            /* "123." is a number too */
  if ((r >> 24) % 2 == 0) {
    const int e = (int) ((r >> 32) % 61) - 30;
    k += (size_t) sprintf (out + k, "%s%d", (r >> 40) & 1 ? "e" : "E", e);
  }
  out[k] = '\0';
  return k;
}

START_TEST (table_rounding_random)
{
  /* Bit-equal to glibc strtod (correctly rounded in the C locale) for 100000 random
     decimals, which exercise both the exact fast path and the strtod path. */
  const size_t n = 100000;
  uint64_t seed = 0x9e3779b97f4a7c15ULL;
  char *text = malloc (n * 48 + 8), *p;
  double *want = malloc (n * sizeof *want);
  char (*strs)[48] = malloc (n * sizeof *strs);
  bl_err err = { 0 };
  bl_table *t;
  const double *x;
  strcpy (text, "x\n");
  p = text + 2;
  for (size_t i = 0; i < n; i++) {
    const size_t k = random_decimal (&seed, strs[i], '.');
    want[i] = strtod (strs[i], NULL);
    memcpy (p, strs[i], k);
    p += k;
    *p++ = '\n';
  }
  *p = '\0';
  t = read_str (text, NULL, &err);
  ck_assert_msg (t != NULL, "table_rounding_random: %s: %s", err.where, err.msg);
  ck_assert_uint_eq (bl_table_nrows (t), n);
  x = bl_table_num (t, 0);
  for (size_t i = 0; i < n; i++)
    ck_assert_msg (bits (x[i]) == bits (want[i]), "table_rounding_random row %zu '%s': %a vs "
                   "strtod %a", i, strs[i], x[i], want[i]);
  bl_table_free (t);
  free (strs);
  free (want);
  free (text);
}
END_TEST

/* strtod of the K-byte decimal S (shorter than 48 bytes) written with a decimal comma or
   point: the reference value of the reader's decimal-comma reading. */
static double
strtod_comma (const char *s, size_t k)
{
  char dot[48];
  memcpy (dot, s, k + 1);
  for (size_t c = 0; c < k; c++)
    if (dot[c] == ',')
      dot[c] = '.';
  return strtod (dot, NULL);
}

START_TEST (table_rounding_random_comma)
{
  /* The same with a decimal comma and ';' between fields: 20000 values in two columns. */
  const size_t n = 20000;
  uint64_t seed = 0x2545f4914f6cdd1dULL;
  char *text = malloc (n * 100 + 16), *p, buf[48];
  double *want = malloc (2 * n * sizeof *want);
  bl_err err = { 0 };
  bl_table_opts opt;
  bl_table *t;
  bl_table_opts_init (&opt);
  opt.delimiter = ';';
  opt.decimal_comma = 1;
  strcpy (text, "a;b\n");
  p = text + 4;
  for (size_t i = 0; i < 2 * n; i++) {
    const size_t k = random_decimal (&seed, buf, ',');
    want[i] = strtod_comma (buf, k);
    memcpy (p, buf, k);
    p += k;
    *p++ = i % 2 == 0 ? ';' : '\n';
  }
  *p = '\0';
  t = read_str (text, &opt, &err);
  ck_assert_msg (t != NULL, "table_rounding_random_comma: %s: %s", err.where, err.msg);
  for (size_t i = 0; i < 2 * n; i++)
    ck_assert_msg (bits (bl_table_num (t, i % 2)[i / 2]) == bits (want[i]),
                   "table_rounding_random_comma value %zu", i);
  bl_table_free (t);
  free (want);
  free (text);
}
END_TEST

/* A short decimal, the form the one-load path (table.c: scan16) reads: an optional sign,
   0 to 10 digits, an optional mark with 0 to 10 digits after it (so the limits of 8 digits
   a side and 15 in all are met and passed), at least one digit in all. */
static size_t
short_decimal (uint64_t *s, char *out, char mark)
{
  size_t k = 0;
  const uint64_t r = next_rand (s);
  const int n1 = (int) (r % 11), n2 = (int) ((r >> 8) % 11), has_mark = (r >> 16) % 4 != 0;
  if ((r >> 20) % 3 == 0)
    out[k++] = (r >> 22) & 1 ? '-' : '+';
  for (int i = 0; i < n1; i++)
    out[k++] = (char) ('0' + ((r >> 24) % 5 == 0 ? 0 : next_rand (s) % 10));
  if (has_mark) {
    out[k++] = mark;
    for (int i = 0; i < n2; i++)
      out[k++] = (char) ('0' + next_rand (s) % 10);
  }
  if (n1 == 0 && (!has_mark || n2 == 0))
    out[k++] = (char) ('0' + (r >> 28) % 10);
  out[k] = '\0';
  return k;
}

START_TEST (table_rounding_short_forms)
{
  /* Bit-equal to glibc strtod for 299999 short decimals in rows of seven cells, with '.'
     and ',' delimiters and with ';' and a decimal comma: the 16-byte path and the byte
     path around its limits (8 digits a side, 15 in all, the last 24 bytes of the input),
     zeros of either sign, "5." and ".5" (Clinger 1990 for the fast path; strtod as the
     reference). */
  const size_t n = 299999, nc = 7;      /* 42857 rows */
  for (int comma = 0; comma <= 1; comma++) {
    uint64_t seed = 0x853c49e6748fea9bULL + (uint64_t) comma;
    char *text = malloc (n * 32 + 64), *p, buf[48];
    double *want = malloc (n * sizeof *want);
    bl_err err = { 0 };
    bl_table_opts opt;
    bl_table *t;
    bl_table_opts_init (&opt);
    if (comma) {
      opt.delimiter = ';';
      opt.decimal_comma = 1;
    }
    p = text + sprintf (text, comma ? "a;b;c;d;e;f;g\n" : "a,b,c,d,e,f,g\n");
    for (size_t i = 0; i < n; i++) {
      const size_t k = short_decimal (&seed, buf, comma ? ',' : '.');
      want[i] = strtod_comma (buf, k);
      memcpy (p, buf, k);
      p += k;
      *p++ = (i + 1) % nc == 0 ? '\n' : comma ? ';' : ',';
    }
    *p = '\0';
    for (unsigned th = 1; th <= 2; th++) {
      opt.threads = th;
      opt.chunk = 65536;
      t = read_str (text, &opt, &err);
      ck_assert_msg (t != NULL, "table_rounding_short_forms: %s: %s", err.where, err.msg);
      ck_assert_uint_eq (bl_table_nrows (t), n / nc);
      for (size_t i = 0; i < n; i++)
        ck_assert_msg (bits (bl_table_num (t, i % nc)[i / nc]) == bits (want[i]),
                       "table_rounding_short_forms (comma %d, threads %u) value %zu: %a vs "
                       "strtod %a", comma, th, i, bl_table_num (t, i % nc)[i / nc], want[i]);
      bl_table_free (t);
    }
    free (want);
    free (text);
  }
}
END_TEST

/* ------------------------------------------------------------------ basics */

START_TEST (table_crlf_bom_final_line)
{
  /* A UTF-8 byte order mark is skipped, CRLF ends lines, and the last line needs no end. */
  static const char text[] = "\xef\xbb\xbfhours,stops\r\n2.385,7\r\n11.07,\"2\"";
  bl_err err = { 0 };
  bl_table *t = read_str (text, NULL, &err);
  ck_assert_msg (t != NULL, "crlf: %s: %s", err.where, err.msg);
  ck_assert_str_eq (bl_table_colname (t, 0), "hours");
  ck_assert_ptr_null (bl_table_colname (t, 2));
  ck_assert_uint_eq (bl_table_nrows (t), 2);
  ck_assert_double_eq (bl_table_num (t, 0)[1], 11.07);
  ck_assert_double_eq (bl_table_num (t, 1)[1], 2.0);    /* a quoted number is a number */
  ck_assert_uint_eq (bl_table_line (t, 1), 3);
  ck_assert_str_eq (bl_table_source (t), "mem.csv");
  bl_table_free (t);
}
END_TEST

START_TEST (table_trailing_empty_lines)
{
  bl_err err = { 0 };
  bl_table *t = read_str ("a,b\n1,2\n\n", NULL, &err);
  ck_assert_msg (t != NULL, "trailing empty line: %s", err.msg);
  ck_assert_uint_eq (bl_table_nrows (t), 1);
  bl_table_free (t);
  t = read_str ("a,b\r\n1,2\r\n\r\n\r\n", NULL, &err);
  ck_assert_msg (t != NULL, "trailing empty CRLF lines: %s", err.msg);
  ck_assert_uint_eq (bl_table_nrows (t), 1);
  bl_table_free (t);
  /* In a one-column table an empty line inside the data is a missing cell. */
  t = read_str ("stops\n3\n\n5\n\n", NULL, &err);
  ck_assert_msg (t != NULL, "single column: %s", err.msg);
  ck_assert_uint_eq (bl_table_nrows (t), 3);
  ck_assert_msg (isnan (bl_table_num (t, 0)[1]), "single column: row 1 not missing");
  ck_assert_uint_eq (bl_table_line (t, 1), 3);
  ck_assert_uint_eq (bl_table_line (t, 2), 4);
  bl_table_free (t);
}
END_TEST

START_TEST (table_header_only)
{
  bl_err err = { 0 };
  bl_table *t = read_str ("hours,site\n", NULL, &err);
  ck_assert_msg (t != NULL, "header only: %s", err.msg);
  ck_assert_uint_eq (bl_table_nrows (t), 0);
  ck_assert_uint_eq (bl_table_ncols (t), 2);
  ck_assert_int_eq (bl_table_is_numeric (t, 0), 1);
  ck_assert_ptr_nonnull (bl_table_num (t, 1));
  bl_table_free (t);
  t = read_str ("hours", NULL, &err);                     /* no line end at all */
  ck_assert_msg (t != NULL, "header only, no newline: %s", err.msg);
  ck_assert_uint_eq (bl_table_ncols (t), 1);
  bl_table_free (t);
}
END_TEST

START_TEST (table_missing_markers)
{
  /* Missing: empty, NA, NaN, . (exact, also quoted, blanks around ignored).  "na" and "N/A"
     are labels; a column with only missing cells is numeric and all NAN. */
  static const char text[] =
    "x,none,lab\n"
    "1.5,,a\n"
    "NA,NA,\"NA\"\n"
    "NaN,\"\",na\n"
    ".,.,N/A\n"
    " 2.25 , NA ,.\n"
    "\"NaN\",,\n";
  bl_err err = { 0 };
  bl_table *t = read_str (text, NULL, &err);
  const double *x, *none;
  const int32_t *lab;
  ck_assert_msg (t != NULL, "missing markers: %s: %s", err.where, err.msg);
  x = bl_table_num (t, 0);
  none = bl_table_num (t, 1);
  lab = bl_table_codes (t, 2);
  ck_assert_ptr_nonnull (x);
  ck_assert_ptr_nonnull (none);
  ck_assert_ptr_nonnull (lab);
  ck_assert_double_eq (x[0], 1.5);
  ck_assert_msg (isnan (x[1]) && isnan (x[2]) && isnan (x[3]) && isnan (x[5]),
                 "missing markers: x");
  ck_assert_double_eq (x[4], 2.25);
  ck_assert_int_eq (bl_table_is_numeric (t, 1), 1);
  for (size_t i = 0; i < 6; i++)
    ck_assert_msg (isnan (none[i]), "missing markers: none[%zu]", i);
  ck_assert_uint_eq (bl_table_nlevels (t, 2), 3);         /* N/A, a, na */
  ck_assert_str_eq (bl_table_level (t, 2, 0), "N/A");
  ck_assert_str_eq (bl_table_level (t, 2, 1), "a");
  ck_assert_str_eq (bl_table_level (t, 2, 2), "na");
  ck_assert_int_eq (lab[0], 1);
  ck_assert_int_eq (lab[1], -1);
  ck_assert_int_eq (lab[2], 2);
  ck_assert_int_eq (lab[3], 0);
  ck_assert_int_eq (lab[4], -1);
  ck_assert_int_eq (lab[5], -1);
  bl_table_free (t);
}
END_TEST

START_TEST (table_number_forms)
{
  /* Accepted: signs, leading/trailing mark, exponents, blanks around, subnormals. */
  static const char text[] =
    "v\n+2.5\n-.5\n5.\n1E3\n2.5e-3\n \t7 \n0004.25\n-0.0e0\n4.9e-324\n";
  static const double want[] = { 2.5, -0.5, 5.0, 1000.0, 0.0025, 7.0, 4.25, -0.0, 4.9e-324 };
  bl_err err = { 0 };
  bl_table *t = read_str (text, NULL, &err);
  const double *v;
  ck_assert_msg (t != NULL, "number forms: %s: %s", err.where, err.msg);
  v = bl_table_num (t, 0);
  ck_assert_uint_eq (bl_table_nrows (t), 9);
  for (size_t i = 0; i < 9; i++)
    ck_assert_msg (bits (v[i]) == bits (want[i]), "number forms row %zu: %a", i, v[i]);
  bl_table_free (t);
}
END_TEST

START_TEST (table_categorical_order)
{
  /* Levels in byte order (strcmp): uppercase before lowercase, UTF-8 multibyte last; codes
     follow the sorted levels. */
  static const char text[] =
    "site,hours\nnorth,1\nEast,2\n\xc3\xa9tang,3\nnorth,4\neast,5\nEast,6\n,7\nZulu,8\n";
  static const char *const lev[] = { "East", "Zulu", "east", "north", "\xc3\xa9tang" };
  static const int32_t code[] = { 3, 0, 4, 3, 2, 0, -1, 1 };
  bl_err err = { 0 };
  bl_table *t = read_str (text, NULL, &err);
  const int32_t *c;
  ck_assert_msg (t != NULL, "categorical order: %s", err.msg);
  ck_assert_int_eq (bl_table_is_numeric (t, 0), 0);
  ck_assert_ptr_null (bl_table_num (t, 0));
  ck_assert_ptr_null (bl_table_codes (t, 1));
  ck_assert_uint_eq (bl_table_nlevels (t, 0), 5);
  ck_assert_uint_eq (bl_table_nlevels (t, 1), 0);
  for (size_t k = 0; k < 5; k++)
    ck_assert_msg (strcmp (bl_table_level (t, 0, k), lev[k]) == 0, "categorical level %zu", k);
  ck_assert_ptr_null (bl_table_level (t, 0, 5));
  c = bl_table_codes (t, 0);
  for (size_t i = 0; i < 8; i++)
    ck_assert_msg (c[i] == code[i], "categorical code %zu: %d", i, c[i]);
  ck_assert_int_eq (bl_table_find (t, "hours"), 1);
  ck_assert_int_eq (bl_table_find (t, "site"), 0);
  ck_assert_int_eq (bl_table_find (t, "Hours"), -1);
  bl_table_free (t);
}
END_TEST

START_TEST (table_categorical_many_levels)
{
  /* 5000 distinct levels (several rehashes), inserted in a scrambled order, come out sorted
     and every code names its own text. */
  const size_t n = 5000;
  char *text = malloc (n * 16 + 16), *p = text;
  bl_err err = { 0 };
  bl_table *t;
  const int32_t *c;
  p += sprintf (p, "pump\n");
  for (size_t i = 0; i < n; i++)
    p += sprintf (p, "p%zu\n", (i * 2654435761u) % n);
  t = read_str (text, NULL, &err);
  ck_assert_msg (t != NULL, "many levels: %s", err.msg);
  ck_assert_uint_eq (bl_table_nlevels (t, 0), n);
  for (size_t k = 1; k < n; k++)
    ck_assert_msg (strcmp (bl_table_level (t, 0, k - 1), bl_table_level (t, 0, k)) < 0,
                   "many levels: order at %zu", k);
  c = bl_table_codes (t, 0);
  for (size_t i = 0; i < n; i++) {
    char want[32];
    sprintf (want, "p%zu", (i * 2654435761u) % n);
    ck_assert_msg (strcmp (bl_table_level (t, 0, (size_t) c[i]), want) == 0,
                   "many levels: row %zu", i);
  }
  bl_table_free (t);
  free (text);
}
END_TEST

START_TEST (table_forced_categorical)
{
  static const char *const cat[] = { "stops" };
  bl_table_opts opt;
  bl_err err = { 0 };
  bl_table *t;
  bl_table_opts_init (&opt);
  ck_assert_int_eq (opt.delimiter, 0);
  ck_assert_uint_eq (opt.max_levels, BL_TABLE_MAX_LEVELS);
  opt.categorical = cat;
  opt.n_categorical = 1;
  t = read_str ("hours,stops\n2.385,10\n1.5,9\n3,NA\n4,10\n", &opt, &err);
  ck_assert_msg (t != NULL, "forced categorical: %s", err.msg);
  ck_assert_int_eq (bl_table_is_numeric (t, 1), 0);
  ck_assert_uint_eq (bl_table_nlevels (t, 1), 2);
  ck_assert_str_eq (bl_table_level (t, 1, 0), "10");     /* byte order: "10" < "9" */
  ck_assert_str_eq (bl_table_level (t, 1, 1), "9");
  ck_assert_int_eq (bl_table_codes (t, 1)[2], -1);
  bl_table_free (t);
  /* Forced, with no data rows. */
  t = read_str ("hours,stops\n", &opt, &err);
  ck_assert_msg (t != NULL, "forced categorical empty: %s", err.msg);
  ck_assert_ptr_nonnull (bl_table_codes (t, 1));
  ck_assert_uint_eq (bl_table_nlevels (t, 1), 0);
  bl_table_free (t);
}
END_TEST

START_TEST (table_tsv_by_name)
{
  /* A name ending in .tsv selects tab; so does .tsv.gz (and the data are gzip). */
  static const char text[] = "site\thours\nnorth, upper\t2.385\nsouth\t11.07\n";
  char dir[512], path[600];
  bl_err err = { 0 };
  size_t zlen;
  unsigned char *z = test_gzip_bytes (text, strlen (text), &zlen);
  bl_table *t;
  test_tmpdir (dir, sizeof dir);
  snprintf (path, sizeof path, "%s/pumps.tsv", dir);
  test_write_file (path, text, strlen (text));
  t = bl_table_read (path, NULL, &err);
  ck_assert_msg (t != NULL, "tsv: %s: %s", err.where, err.msg);
  ck_assert_uint_eq (bl_table_ncols (t), 2);
  ck_assert_str_eq (bl_table_level (t, 0, 0), "north, upper");
  ck_assert_double_eq (bl_table_num (t, 1)[1], 11.07);
  ck_assert_str_eq (bl_table_source (t), path);
  bl_table_free (t);
  unlink (path);
  snprintf (path, sizeof path, "%s/pumps.TSV.gz", dir);
  test_write_file (path, z, zlen);
  t = bl_table_read (path, NULL, &err);
  ck_assert_msg (t != NULL, "tsv.gz: %s: %s", err.where, err.msg);
  ck_assert_uint_eq (bl_table_ncols (t), 2);
  ck_assert_double_eq (bl_table_num (t, 1)[0], 2.385);
  bl_table_free (t);
  unlink (path);
  /* The same bytes under a .csv name are one column per line. */
  snprintf (path, sizeof path, "%s/pumps.csv", dir);
  test_write_file (path, text, strlen (text));
  ck_assert_ptr_null (bl_table_read (path, NULL, &err));
  ck_assert_int_eq (err.code, BL_EDATA);
  ck_assert_msg (strstr (err.where, "/pumps.csv:2") != NULL, "tsv as csv: where %s", err.where);
  ck_assert_msg (strstr (err.msg, "record has 2 fields, header has 1") != NULL,
                 "tsv as csv: %s", err.msg);
  unlink (path);
  rmdir (dir);
  free (z);
}
END_TEST

START_TEST (table_semicolon_decimal_comma)
{
  bl_table_opts opt;
  bl_err err = { 0 };
  bl_table *t;
  bl_table_opts_init (&opt);
  opt.delimiter = ';';
  opt.decimal_comma = 1;
  t = read_str ("hours;site\n3,14;\"a;b\"\n-0,5e2;c\n", &opt, &err);
  ck_assert_msg (t != NULL, "decimal comma: %s: %s", err.where, err.msg);
  ck_assert_double_eq (bl_table_num (t, 0)[0], 3.14);
  ck_assert_double_eq (bl_table_num (t, 0)[1], -50.0);
  ck_assert_str_eq (bl_table_level (t, 1, 0), "a;b");
  bl_table_free (t);
  /* With a decimal comma, a point is not a decimal mark. */
  expect_fail ("decimal comma, point", "hours;x\n3,14;1\n3.14;2\n2,5;3\n", &opt, BL_EDATA,
               "mem.csv:3:1", "not a number: '3.14'");
  /* The overflow message shows the cell as written. */
  expect_fail ("decimal comma, overflow", "load\n1,5e999\n1\n2,5\n", &opt, BL_EDATA,
               "mem.csv:2:1", "value '1,5e999' overflows a double in column 'load'");
}
END_TEST

START_TEST (table_gzip_file)
{
  /* gzip found by magic bytes whatever the name; two members read as one stream. */
  static const char a[] = "hours,site\n2.385,north\n", b[] = "11.07,south\n0.5,north\n";
  char dir[512], path[600];
  bl_err err = { 0 };
  size_t la, lb;
  unsigned char *za = test_gzip_bytes (a, strlen (a), &la);
  unsigned char *zb = test_gzip_bytes (b, strlen (b), &lb);
  unsigned char *both = malloc (la + lb);
  bl_table *t;
  memcpy (both, za, la);
  memcpy (both + la, zb, lb);
  test_tmpdir (dir, sizeof dir);
  snprintf (path, sizeof path, "%s/pumps.csv", dir);
  test_write_file (path, both, la + lb);
  t = bl_table_read (path, NULL, &err);
  ck_assert_msg (t != NULL, "gzip file: %s: %s", err.where, err.msg);
  ck_assert_uint_eq (bl_table_nrows (t), 3);
  ck_assert_double_eq (bl_table_num (t, 0)[2], 0.5);
  ck_assert_uint_eq (bl_table_nlevels (t, 1), 2);
  ck_assert_uint_eq (bl_table_line (t, 2), 4);
  bl_table_free (t);
  /* A truncated file: an error, never the rows read so far. */
  test_write_file (path, both, la + lb - 5);
  t = bl_table_read (path, NULL, &err);
  ck_assert_ptr_null (t);
  ck_assert_int_eq (err.code, BL_EDATA);
  ck_assert_str_eq (err.where, path);
  ck_assert_msg (strstr (err.msg, "truncated gzip stream") != NULL, "gzip truncated: %s",
                 err.msg);
  /* Corrupt: the first member's CRC32 is wrong (RFC 1952 2.3.1). */
  both[la - 8] ^= 0x11;
  test_write_file (path, both, la + lb);
  t = bl_table_read (path, NULL, &err);
  ck_assert_ptr_null (t);
  ck_assert_int_eq (err.code, BL_EDATA);
  ck_assert_str_eq (err.where, path);
  ck_assert_msg (strstr (err.msg, "corrupt gzip stream") != NULL, "gzip corrupt: %s", err.msg);
  unlink (path);
  rmdir (dir);
  free (both);
  free (za);
  free (zb);
}
END_TEST

START_TEST (table_gzip_mem_big)
{
  /* 300000 rows through gzip from memory: many 1 MiB chunks, records cut at chunk ends. */
  const size_t n = 300000;
  char *text = malloc (n * 40 + 32), *p = text;
  uint64_t seed = 12345;
  bl_err err = { 0 };
  size_t zlen;
  unsigned char *z;
  bl_table *t;
  p += sprintf (p, "hours,stops,site\n");
  for (size_t i = 0; i < n; i++)
    p += sprintf (p, "%.6f,%u,s%u\n", (double) (next_rand (&seed) % 1000000) / 997.0,
                  (unsigned) (i % 17), (unsigned) (i % 7));
  z = test_gzip_bytes (text, (size_t) (p - text), &zlen);
  t = bl_table_read_mem (z, zlen, "big.csv.gz", NULL, &err);
  ck_assert_msg (t != NULL, "gzip mem big: %s: %s", err.where, err.msg);
  ck_assert_uint_eq (bl_table_nrows (t), n);
  ck_assert_double_eq (bl_table_num (t, 1)[n - 1], (double) ((n - 1) % 17));
  ck_assert_uint_eq (bl_table_line (t, n - 1), n + 1);
  ck_assert_uint_eq (bl_table_nlevels (t, 2), 7);
  bl_table_free (t);
  free (z);
  free (text);
}
END_TEST

START_TEST (table_long_field)
{
  /* One field of 3 MiB, quoted with "" pairs and line breaks, and one unquoted of 1 MiB + 1:
     both longer than the 1 MiB read chunk, so the buffer must grow to hold the record. */
  const size_t big = 3u << 20, mid = (1u << 20) + 1;
  char *text = malloc (2 * big + mid + 64), *p = text;
  bl_err err = { 0 };
  bl_table *t;
  const char *lev;
  size_t lines = 0;
  p += sprintf (p, "note,n\n\"");
  for (size_t i = 0; i < big; i++) {
    const char c = i % 1000 == 999 ? '\n' : i % 100 == 50 ? '"' : 'a';
    if (c == '"')
      *p++ = '"';
    if (c == '\n')
      lines++;
    *p++ = c;
  }
  p += sprintf (p, "\",1\n");
  memset (p, 'b', mid);
  p += mid;
  p += sprintf (p, ",2\n");
  t = bl_table_read_mem (text, (size_t) (p - text), "long.csv", NULL, &err);
  ck_assert_msg (t != NULL, "long field: %s: %s", err.where, err.msg);
  ck_assert_uint_eq (bl_table_nrows (t), 2);
  ck_assert_uint_eq (bl_table_nlevels (t, 0), 2);
  lev = bl_table_level (t, 0, 0);                 /* "aaa..." sorts before "bbb..." */
  ck_assert_uint_eq (strlen (lev), big);
  ck_assert_int_eq (lev[50], '"');
  ck_assert_int_eq (lev[999], '\n');
  ck_assert_uint_eq (strlen (bl_table_level (t, 0, 1)), mid);
  ck_assert_uint_eq (bl_table_line (t, 1), 2 + lines + 1);
  ck_assert_double_eq (bl_table_num (t, 1)[1], 2.0);
  bl_table_free (t);
  free (text);
}
END_TEST

START_TEST (table_many_columns)
{
  /* 3000 columns: field array growth and the name index. */
  const size_t m = 3000;
  char *text = malloc (m * 24 + 16), *p = text;
  bl_err err = { 0 };
  bl_table *t;
  for (size_t j = 0; j < m; j++)
    p += sprintf (p, "%sc%zu", j ? "," : "", j);
  *p++ = '\n';
  for (size_t j = 0; j < m; j++)
    p += sprintf (p, "%s%zu.5", j ? "," : "", j);
  *p++ = '\n';
  *p = '\0';
  t = read_str (text, NULL, &err);
  ck_assert_msg (t != NULL, "many columns: %s", err.msg);
  ck_assert_uint_eq (bl_table_ncols (t), m);
  ck_assert_int_eq (bl_table_find (t, "c2999"), 2999);
  ck_assert_double_eq (bl_table_num (t, 1234)[0], 1234.5);
  bl_table_free (t);
  free (text);
}
END_TEST

START_TEST (table_stdin)
{
  /* "-" reads standard input; a temporary file is put on descriptor 0. */
  char dir[512], path[600];
  bl_err err = { 0 };
  bl_table *t;
  FILE *f;
  int saved;
  test_tmpdir (dir, sizeof dir);
  snprintf (path, sizeof path, "%s/in.csv", dir);
  test_write_file (path, "stops\n4\n", 8);
  saved = dup (0);
  f = freopen (path, "rb", stdin);
  ck_assert_ptr_nonnull (f);
  t = bl_table_read ("-", NULL, &err);
  ck_assert_msg (t != NULL, "stdin: %s", err.msg);
  ck_assert_str_eq (bl_table_source (t), "<stdin>");
  ck_assert_double_eq (bl_table_num (t, 0)[0], 4.0);
  bl_table_free (t);
  dup2 (saved, 0);
  close (saved);
  unlink (path);
  rmdir (dir);
}
END_TEST


/* ------------------------------------------------------------------ column types by rule */

/* The project's typing rule (table.h; issue 14): numeric when more than half of the
   non-missing cells are numbers, every other cell then an error; else categorical.  The
   oracle below counts what the generator wrote, independently of the reader. */

/* ROWS rows of "y,x": x is a number, except row AT (0-based) which is BAD. */
static char *
one_typo_csv (size_t rows, size_t at, const char *bad, size_t *len)
{
  char *text = malloc (rows * 48 + 64), *p = text;
  ck_assert_ptr_nonnull (text);
  p += sprintf (p, "y,x\n");
  for (size_t i = 0; i < rows; i++) {
    if (i == at)
      p += sprintf (p, "%zu.5,%s\n", i, bad);
    else
      p += sprintf (p, "%zu.5,%.3f\n", i, 1.0 + (double) (i * 7919 % 1000) / 37.0);
  }
  *len = (size_t) (p - text);
  return text;
}

START_TEST (table_type_not_by_position)
{
  static const char *const typo[] = { "1.2.3", "\"1,234\"", "1e5x", "N/A", "heavy" };
  static const char *const shown[] = { "1.2.3", "1,234", "1e5x", "N/A", "heavy" };
  const size_t rows = 6000, at[] = { 0, 2999, 5999 };
  static const size_t chunk[] = { 64, 4096, 65536 };
  for (size_t k = 0; k < 5; k++)
    for (size_t a = 0; a < 3; a++) {
      size_t len;
      char *text = one_typo_csv (rows, at[a], typo[k], &len), where[64], frag[160];
      bl_table_opts o;
      bl_err err = { 0 };
      snprintf (where, sizeof where, "r.csv:%zu:2", at[a] + 2);
      snprintf (frag, sizeof frag, "not a number: '%s' in column 'x' (5999 of its 6000 "
                "non-missing cells are numbers; --categorical x for a column meant as labels)",
                shown[k]);
      for (size_t c = 0; c < 3; c++)
        same_both_ways ("one typo", text, len, chunk[c], NULL);
      bl_table_opts_init (&o);
      o.threads = 1;
      ck_assert_ptr_null (bl_table_read_mem (text, len, "r.csv", &o, &err));
      ck_assert_msg (err.code == BL_EDATA && strcmp (err.where, where) == 0
                     && strstr (err.msg, frag), "typo %zu at %zu: %s: %s", k, at[a],
                     err.where, err.msg);
      free (text);
    }
}
END_TEST

START_TEST (table_type_majority)
{
  bl_err err = { 0 };
  bl_table *t;
  /* exactly half numbers: categorical, the numbers levels as written ("3.50", not 3.5) */
  t = read_str ("g\n3.50\nA\n12\nB\nNA\n", NULL, &err);
  ck_assert_msg (t != NULL, "half: %s", err.msg);
  ck_assert_int_eq (bl_table_is_numeric (t, 0), 0);
  ck_assert_uint_eq (bl_table_nlevels (t, 0), 4);
  ck_assert_str_eq (bl_table_level (t, 0, 0), "12");
  ck_assert_str_eq (bl_table_level (t, 0, 1), "3.50");
  ck_assert_int_eq (bl_table_codes (t, 0)[0], 1);
  ck_assert_int_eq (bl_table_codes (t, 0)[4], -1);
  bl_table_free (t);
  /* one more number: numeric, the label an error (the first of two) */
  expect_fail ("more than half", "g\n3.50\nA\n12\nB\n7\n8\n", NULL, BL_EDATA, "mem.csv:3:1",
               "not a number: 'A' in column 'g' (4 of its 6 non-missing cells are numbers");
  /* a label first, numbers after it (their texts kept as read) */
  t = read_str ("g,h\nx, 4 \ny,5\nz,6\n1,7\n", NULL, &err);
  ck_assert_msg (t != NULL, "label first: %s", err.msg);
  ck_assert_int_eq (bl_table_is_numeric (t, 0), 0);
  ck_assert_uint_eq (bl_table_nlevels (t, 0), 4);
  ck_assert_str_eq (bl_table_level (t, 0, 0), "1");
  ck_assert_int_eq (bl_table_is_numeric (t, 1), 1);
  bl_table_free (t);
  expect_fail ("label first, numeric", "h\nq\n 4 \n5\n", NULL, BL_EDATA, "mem.csv:2:1",
               "not a number: 'q' in column 'h' (2 of its 3");
  /* max_levels: numeric by the rule, the error is the bad cell; categorical, the limit */
  {
    bl_table_opts o;
    bl_table_opts_init (&o);
    o.max_levels = 3;
    expect_fail ("levels past the limit, numeric", "g\na\nb\nc\nd\n1\n2\n3\n4\n5\n", &o,
                 BL_EDATA, "mem.csv:2:1", "not a number: 'a' in column 'g' (5 of its 9");
    expect_fail ("levels past the limit, categorical", "g\na\nb\nc\nd\n1\n2\n3\n", &o, BL_EDATA,
                 "mem.csv:5:1", "column 'g' has more than 3 distinct levels");
  }
  /* declared categorical: every cell a label, none an error */
  {
    static const char *const cat[] = { "g" };
    bl_table_opts o;
    bl_table_opts_init (&o);
    o.categorical = cat;
    o.n_categorical = 1;
    t = read_str ("g\n1\n2\n1.2.3\n", &o, &err);
    ck_assert_msg (t != NULL, "declared: %s", err.msg);
    ck_assert_uint_eq (bl_table_nlevels (t, 0), 3);
    bl_table_free (t);
  }
}
END_TEST

/* Random columns of numbers and labels near half and half, numbers often first (the column
   is then read a second time for its texts): the type follows the oracle's count, each
   level is the cell as written, and 1 and 2 threads in steps of every size agree. */
START_TEST (table_type_random_mix)
{
  uint64_t s = 0x9e3779b97f4a7c15u;
  for (int rep = 0; rep < 12; rep++) {
    const size_t rows = 1500 + (size_t) (next_rand (&s) % 4000);
    const unsigned pct = 35 + (unsigned) (next_rand (&s) % 31);   /* numbers: 35-65% */
    char *text = malloc (rows * 40 + 32), *p = text, **cell = malloc (rows * sizeof *cell);
    size_t nnum = 0, nlab = 0, len;
    bl_table *t;
    bl_err err = { 0 };
    ck_assert_ptr_nonnull (text);
    ck_assert_ptr_nonnull (cell);
    p += sprintf (p, "id,g\n");
    for (size_t i = 0; i < rows; i++) {
      const uint64_t r = next_rand (&s);
      p += sprintf (p, "%zu,", i);
      cell[i] = p;
      if (i < 50 || (r % 100) < pct) {          /* the first 50 rows always numbers */
        p += sprintf (p, "%u.%02u", (unsigned) (r >> 20) % 40, (unsigned) (r >> 40) % 100);
        nnum++;
      } else {
        p += sprintf (p, "L%u", (unsigned) (r >> 20) % 30);
        nlab++;
      }
      *p++ = '\n';
    }
    *p = '\0';
    len = (size_t) (p - text);
    for (size_t c = 64; c <= 65536; c *= 32)
      same_both_ways ("random mix", text, len, c, NULL);
    t = bl_table_read_mem (text, len, "r.csv", NULL, &err);
    if (nnum > nlab) {
      ck_assert_msg (t == NULL && err.code == BL_EDATA, "rep %d: numeric expected", rep);
    } else {
      const int32_t *codes;
      ck_assert_msg (t != NULL, "rep %d: %s: %s", rep, err.where, err.msg);
      ck_assert_int_eq (bl_table_is_numeric (t, 1), 0);
      codes = bl_table_codes (t, 1);
      for (size_t i = 0; i < rows; i++) {
        const char *lev = bl_table_level (t, 1, (size_t) codes[i]);
        ck_assert_msg (strncmp (lev, cell[i], strlen (lev)) == 0 && cell[i][strlen (lev)]
                       == '\n', "rep %d row %zu: level '%s'", rep, i, lev);
      }
    }
    bl_table_free (t);
    free (cell);
    free (text);
  }
}
END_TEST

START_TEST (table_type_reread_file)
{
  /* A file whose column turns categorical after its first numbers is read again, by name:
     the levels are the cells as written. */
  char path[] = "/tmp/check_table_XXXXXX";
  const int fd = mkstemp (path);
  static const char text[] = "y,g\n1,07\n2,7.0\n3,A\n4,B\n5,C\n";
  bl_err err = { 0 };
  bl_table *t;
  ck_assert_int_ge (fd, 0);
  ck_assert_int_eq ((int) write (fd, text, sizeof text - 1), (int) (sizeof text - 1));
  close (fd);
  t = bl_table_read (path, NULL, &err);
  unlink (path);
  ck_assert_msg (t != NULL, "%s: %s", err.where, err.msg);
  ck_assert_uint_eq (bl_table_nlevels (t, 1), 5);
  ck_assert_str_eq (bl_table_level (t, 1, (size_t) bl_table_codes (t, 1)[0]), "07");
  ck_assert_str_eq (bl_table_level (t, 1, (size_t) bl_table_codes (t, 1)[1]), "7.0");
  ck_assert_int_eq (bl_table_is_numeric (t, 0), 1);
  bl_table_free (t);
}
END_TEST

/* ------------------------------------------------------------------ errors */

START_TEST (table_not_a_number)
{
  expect_fail ("not a number", "weight,site\n2.5,a\n12.5kg,b\n3.5,c\n", NULL, BL_EDATA,
               "mem.csv:3:1", "not a number: '12.5kg' in column 'weight' (2 of its 3 "
               "non-missing cells are numbers; --categorical weight for a column meant as "
               "labels)");
  expect_fail ("not a number after missing", "a,weight\n1,NA\n2,3.5\n3,x\n4,5\n", NULL,
               BL_EDATA, "mem.csv:4:2", "not a number: 'x' in column 'weight'");
  expect_fail ("point with decimal comma off", "a\n1\n3,5\n", NULL, BL_EDATA, "mem.csv:3",
               "record has 2 fields, header has 1");
  expect_fail ("lone sign", "a\n1\n-\n2\n", NULL, BL_EDATA, "mem.csv:3:1", "not a number: '-'");
  expect_fail ("exponent without digits", "a\n1\n1e\n2\n", NULL, BL_EDATA, "mem.csv:3:1",
               "not a number: '1e'");
  expect_fail ("two points", "a\n1\n1.2.3\n2\n", NULL, BL_EDATA, "mem.csv:3:1",
               "not a number: '1.2.3'");
  expect_fail ("inner blank", "a\n1\n1 2\n2\n", NULL, BL_EDATA, "mem.csv:3:1",
               "not a number: '1 2'");
}
END_TEST

START_TEST (table_refused_numbers)
{
  /* Forms strtod takes but ballast refuses, whether the column is numeric already or the
     cell would decide its type. */
  expect_fail ("hex", "a\n1\n0x1A\n2\n", NULL, BL_EDATA, "mem.csv:3:1",
               "not a decimal number: '0x1A' in column 'a'");
  expect_fail ("hex first", "a\n0x1p3\n1\n2\n", NULL, BL_EDATA, "mem.csv:2:1",
               "not a decimal number: '0x1p3'");
  expect_fail ("inf", "a\n1\ninf\n2\n", NULL, BL_EDATA, "mem.csv:3:1", "'inf'");
  expect_fail ("infinity first", "b,a\nx,-Infinity\ny,1\nz,2\n", NULL, BL_EDATA, "mem.csv:2:2",
               "not a decimal number: '-Infinity' in column 'a'");
  expect_fail ("nan", "a\n1\nnan\n2\n", NULL, BL_EDATA, "mem.csv:3:1", "'nan'");
  expect_fail ("nan(chars)", "a\nNAN(123)\n1\n2\n", NULL, BL_EDATA, "mem.csv:2:1", "'NAN(123)'");
  expect_fail ("overflow", "hours,load\n1,2\n3,1e999\n4,5\n", NULL, BL_EDATA, "mem.csv:3:2",
               "value '1e999' overflows a double in column 'load'");
  expect_fail ("overflow first", "load\n-1.7976931348623159e308\n1\n2\n", NULL, BL_EDATA,
               "mem.csv:2:1", "value '-1.7976931348623159e308' overflows a double");
  expect_fail ("overflow long exponent", "load\n1\n1e99999999999999999999\n2\n", NULL, BL_EDATA,
               "mem.csv:3:1", "overflows a double");
}
END_TEST

START_TEST (table_refused_numbers_as_labels)
{
  /* In a categorical column the same words are plain labels. */
  bl_err err = { 0 };
  bl_table *t = read_str ("a\nnorth\ninf\n0x1A\n1e999\n", NULL, &err);
  ck_assert_msg (t != NULL, "labels: %s", err.msg);
  ck_assert_uint_eq (bl_table_nlevels (t, 0), 4);
  bl_table_free (t);
}
END_TEST

START_TEST (table_field_count)
{
  expect_fail ("too few", "a,b,c,d\n1,2,3,4\n1,2,3\n", NULL, BL_EDATA, "mem.csv:3",
               "record has 3 fields, header has 4");
  expect_fail ("too many", "a,b\n1,2,3,4,5\n", NULL, BL_EDATA, "mem.csv:2",
               "record has 5 fields, header has 2");
  expect_fail ("empty line inside", "a,b\n1,2\n\n3,4\n", NULL, BL_EDATA, "mem.csv:3",
               "record has 1 field, header has 2");
  expect_fail ("after multiline", "a,b\n\"1\n2\",3\n4\n", NULL, BL_EDATA, "mem.csv:4",
               "record has 1 field, header has 2");
}
END_TEST

START_TEST (table_quote_errors)
{
  expect_fail ("unclosed", "a,b\n1,2\n3,\"open\n4,5\n6,7\n", NULL, BL_EDATA, "mem.csv:3:2",
               "never closed");
  expect_fail ("unclosed in header", "\"a,b\n", NULL, BL_EDATA, "mem.csv:1:1", "never closed");
  expect_fail ("after closing quote", "a,b\n1,\"2\"x\n", NULL, BL_EDATA, "mem.csv:2:2",
               "unexpected 'x' after a closing quote");
  expect_fail ("blank after closing quote", "a,b\n\"1\" ,2\n", NULL, BL_EDATA, "mem.csv:2:1",
               "after a closing quote");
  expect_fail ("byte after closing quote", "a,b\n1,\"2\"\x80\n", NULL, BL_EDATA, "mem.csv:2:2",
               "unexpected byte 0x80");
}
END_TEST

START_TEST (table_nul_and_cr)
{
  static const char nul1[] = "a,b\n1,2\n3,4\0\n";
  static const char nul2[] = "a,b\n1,\"x\ny\0\"\n";
  static const char nul3[] = "a,b\n1,\"x\"\0\n";
  static const char *const lab[] = { "unquoted", "quoted", "after quote" };
  static const char *const where[] = { "nul.csv:3:2", "nul.csv:3:2", "nul.csv:2:2" };
  const char *const text[] = { nul1, nul2, nul3 };
  const size_t len[] = { sizeof nul1 - 1, sizeof nul2 - 1, sizeof nul3 - 1 };
  for (size_t k = 0; k < 3; k++) {
    bl_err err = { 0 };
    ck_assert_ptr_null (bl_table_read_mem (text[k], len[k], "nul.csv", NULL, &err));
    ck_assert_msg (err.code == BL_EDATA, "NUL %s: code %d", lab[k], err.code);
    ck_assert_msg (strcmp (err.where, where[k]) == 0, "NUL %s: where %s", lab[k], err.where);
    ck_assert_msg (strstr (err.msg, "NUL byte") != NULL, "NUL %s: %s", lab[k], err.msg);
  }
  expect_fail ("lone CR", "a,b\n1,2\r3,4\n", NULL, BL_EDATA, "mem.csv:2:2",
               "carriage return not followed by a line feed");
  expect_fail ("lone CR at end", "a,b\n1,2\r", NULL, BL_EDATA, "mem.csv:2:2",
               "carriage return");
}
END_TEST

START_TEST (table_no_header)
{
  expect_fail ("empty file", "", NULL, BL_EDATA, "mem.csv", "no header row");
  expect_fail ("only newlines", "\n\r\n\n", NULL, BL_EDATA, "mem.csv", "no header row");
  expect_fail ("only BOM", "\xef\xbb\xbf", NULL, BL_EDATA, "mem.csv", "no header row");
  expect_fail ("empty first line", "\na,b\n1,2\n", NULL, BL_EDATA, "mem.csv:1",
               "no header row");
}
END_TEST

START_TEST (table_header_names)
{
  static const struct { const char *lab, *text, *where, *frag; } bad[] = {
    { "empty name", "a,,c\n1,2,3\n", "mem.csv:1:2", "empty column name" },
    { "empty quoted name", "\"\",b\n", "mem.csv:1:1", "empty column name" },
    { "duplicate", "a,b,a\n", "mem.csv:1:3", "duplicate column name 'a' (also column 1)" },
    { "duplicate after unquote", "hours,\"hours\"\n", "mem.csv:1:2", "duplicate" },
    /* The Unicode Standard, table 3-7 (well-formed UTF-8 byte sequences). */
    { "overlong 2-byte", "a,\xc0\xaf\n", "mem.csv:1:2", "not valid UTF-8" },
    { "overlong 3-byte", "a,\xe0\x80\xaf\n", "mem.csv:1:2", "not valid UTF-8" },
    { "overlong 4-byte", "a,\xf0\x8f\xbf\xbf\n", "mem.csv:1:2", "not valid UTF-8" },
    { "surrogate", "a,\xed\xa0\x80\n", "mem.csv:1:2", "not valid UTF-8" },
    { "above U+10FFFF", "a,\xf4\x90\x80\x80\n", "mem.csv:1:2", "not valid UTF-8" },
    { "F5 lead", "\xf5\x80\x80\x80,b\n", "mem.csv:1:1", "not valid UTF-8" },
    { "lone continuation", "a,b\x80\n", "mem.csv:1:2", "not valid UTF-8" },
    { "cut sequence", "a,b\xe2\x82\n", "mem.csv:1:2", "not valid UTF-8" },
    { "bad continuation", "a,\xc3\x28\n", "mem.csv:1:2", "not valid UTF-8" },
  };
  bl_err err = { 0 };
  bl_table *t;
  for (size_t k = 0; k < sizeof bad / sizeof bad[0]; k++)
    expect_fail (bad[k].lab, bad[k].text, NULL, BL_EDATA, bad[k].where, bad[k].frag);
  /* Valid: 2-, 3- and 4-byte forms, the largest code point U+10FFFF, and U+D7FF/U+E000
     either side of the surrogates. */
  t = read_str ("\xc3\xa9,\xe4\xb8\xad,\xf0\x9f\x98\x80,\xf4\x8f\xbf\xbf,\xed\x9f\xbf,"
                "\xee\x80\x80\n1,2,3,4,5,6\n", NULL, &err);
  ck_assert_msg (t != NULL, "valid UTF-8 names: %s: %s", err.where, err.msg);
  ck_assert_int_eq (bl_table_find (t, "\xf4\x8f\xbf\xbf"), 3);
  bl_table_free (t);
}
END_TEST

START_TEST (table_max_levels)
{
  bl_table_opts opt;
  bl_err err = { 0 };
  bl_table *t;
  bl_table_opts_init (&opt);
  opt.max_levels = 3;
  t = read_str ("site\na\nb\nc\na\nc\n", &opt, &err);     /* exactly the limit */
  ck_assert_msg (t != NULL, "max_levels at limit: %s", err.msg);
  ck_assert_uint_eq (bl_table_nlevels (t, 0), 3);
  bl_table_free (t);
  /* The fourth distinct level fails at once, before the bad cell further down. */
  expect_fail ("max_levels", "n,site\n1,a\n2,b\n3,a\n4,c\n5,d\n6,e\nx,f\n", &opt, BL_EDATA,
               "mem.csv:6:2", "column 'site' has more than 3 distinct levels");
}
END_TEST

START_TEST (table_option_errors)
{
  static const char *const cat[] = { "hours", "stopz" };
  bl_table_opts opt;
  bl_table_opts_init (&opt);
  opt.categorical = cat;
  opt.n_categorical = 2;
  expect_fail ("unknown categorical", "hours,stops\n1,2\n", &opt, BL_ESPEC, "mem.csv",
               "no column named 'stopz'");
  bl_table_opts_init (&opt);
  opt.decimal_comma = 1;
  expect_fail ("decimal comma with comma", "a\n1\n", &opt, BL_ESPEC, "mem.csv",
               "decimal comma needs a delimiter other than ','");
  bl_table_opts_init (&opt);
  opt.delimiter = '"';
  expect_fail ("quote delimiter", "a\n1\n", &opt, BL_ESPEC, "mem.csv", "cannot separate");
}
END_TEST

START_TEST (table_io_errors)
{
  bl_err err = { 0 };
  static const char text[] = "a,b\n1,2\n";
  size_t zlen;
  unsigned char *z = test_gzip_bytes (text, strlen (text), &zlen);
  ck_assert_ptr_null (bl_table_read ("/nonexistent/ballast/x.csv", NULL, &err));
  ck_assert_int_eq (err.code, BL_EIO);
  ck_assert_str_eq (err.where, "/nonexistent/ballast/x.csv");
  ck_assert_msg (strstr (err.msg, "cannot open") != NULL, "io missing: %s", err.msg);
  ck_assert_ptr_null (bl_table_read_mem (z, zlen - 1, "cut.gz", NULL, &err));
  ck_assert_int_eq (err.code, BL_EDATA);
  ck_assert_str_eq (err.where, "cut.gz");
  ck_assert_msg (strstr (err.msg, "truncated gzip stream") != NULL, "io cut: %s", err.msg);
  free (z);
}
END_TEST

START_TEST (table_alloc_fail)
{
  /* Fail the N-th allocation for N = 1, 2, ... (SQLite's malloc tests): every failure is
     NULL with BL_ENOMEM until the read succeeds.  Plain and gzip input; a categorical column
     with enough levels to rehash, "" pairs, and a forced categorical column. */
  static const char *const cat[] = { "stops" };
  char *text = malloc (64 * 1024), *p = text;
  size_t zlen;
  unsigned char *z;
  bl_table_opts opt;
  int pass;
  bl_table_opts_init (&opt);
  opt.categorical = cat;
  opt.n_categorical = 1;
  p += sprintf (p, "hours,site,stops,none\n");
  for (int i = 0; i < 1500; i++)
    p += sprintf (p, "%d.25,\"s\"\"%d\",%d,\n", i, i % 40, i % 3);
  z = test_gzip_bytes (text, (size_t) (p - text), &zlen);
  bl_alloc_fail_at (0);
  {
    bl_err err = { 0 };
    bl_table_free (bl_table_read_mem (text, (size_t) (p - text), "a.csv", &opt, &err));
  }
  if (bl_alloc_count () == 0) {
    bl_alloc_fail_at (0);
    free (z);
    free (text);
    return;                     /* built without --enable-alloc-fail */
  }
  for (pass = 0; pass < 2; pass++) {
    unsigned long n;
    for (n = 1; n < 100000; n++) {
      bl_err err = { 0 };
      bl_table *t;
      bl_alloc_fail_at (n);
      t = pass == 0 ? bl_table_read_mem (text, (size_t) (p - text), "a.csv", &opt, &err)
                    : bl_table_read_mem (z, zlen, "a.csv.gz", &opt, &err);
      bl_alloc_fail_at (0);
      if (t) {
        ck_assert_uint_eq (bl_table_nrows (t), 1500);
        ck_assert_uint_eq (bl_table_nlevels (t, 1), 40);
        bl_table_free (t);
        break;
      }
      ck_assert_msg (err.code == BL_ENOMEM, "table_alloc_fail pass %d N=%lu: code %d (%s)",
                     pass, n, err.code, err.msg);
    }
    ck_assert_msg (n > 10 && n < 100000, "table_alloc_fail pass %d: ended at N=%lu", pass, n);
  }
  free (z);
  free (text);
}
END_TEST


/* ------------------------------------------------------------------ parallel */

START_TEST (table_threads_identical)
{
  /* Determinism: threads = 2 gives the table of threads = 1, bit for bit, for random inputs
     and step sizes that put the split points everywhere, inside quoted line feeds too, and
     with column types decided on either side of a split (common practice, no source). */
  static const size_t chunk[] = { 64, 1000, 4093, 16384, 65536, (size_t) 1 << 20 };
  for (uint64_t seed = 1; seed <= 4; seed++) {
    size_t len;
    const size_t rows = 3000 + 1500 * (size_t) seed;
    char *text = random_csv (seed * 0x9e3779b97f4a7c15ULL, rows, rows / (seed + 1),
                             rows - rows / (2 * seed), &len);
    for (size_t k = 0; k < sizeof chunk / sizeof chunk[0]; k++)
      same_both_ways ("threads identical", text, len, chunk[k], NULL);
    free (text);
  }
}
END_TEST

START_TEST (table_threads_uneven_rows)
{
  /* The worker's rows are reserved from the first part's density of line feeds: here long
     records come first and short ones after them, so a second part holds far more records
     than that guess and the worker stops at its limit (the rest is then parsed
     sequentially); the first rows also leave a column missing, so the types are still open
     when the first steps start.  Either way the table is that of one thread, bit for bit
     (common practice, no source). */
  static const size_t chunk[] = { 4096, 20000, 65536, 300000 };
  const size_t nlong = 2000, nshort = 60000;
  char *text = malloc ((nlong + nshort) * 120 + 64), *p = text;
  ck_assert_ptr_nonnull (text);
  p += sprintf (p, "a,b,c\n");
  for (size_t i = 0; i < nlong; i++)
    p += sprintf (p, "%zu.%080zu,%s,%zu\n", i, i, i < 700 ? "" : "2.5", i % 7);
  for (size_t i = 0; i < nshort; i++)
    p += sprintf (p, "%zu,%zu,%zu\n", i % 10, i % 3, i % 9);
  for (size_t k = 0; k < sizeof chunk / sizeof chunk[0]; k++)
    same_both_ways ("threads uneven rows", text, (size_t) (p - text), chunk[k], NULL);
  free (text);
}
END_TEST

START_TEST (table_threads_errors_identical)
{
  /* A bad cell, a short record, a lone CR, a categorical limit and an unclosed quote, put at
     many places: the parallel read reports exactly the sequential error. */
  size_t len;
  char *text = random_csv (77, 4000, 100, 200, &len);
  char *copy = malloc (len + 64);
  bl_table_opts opt;
  uint64_t s = 5;
  for (int k = 0; k < 24; k++) {
    /* the start of a random line in the second half of some step */
    size_t at = (size_t) (next_rand (&s) % len), e;
    while (at > 0 && text[at - 1] != '\n')
      at--;
    memcpy (copy, text, len);
    e = len;
    switch (k % 4) {
    case 0: memcpy (copy + at, "12.5kg", 6); break;         /* "not a number", or a label */
    case 1: copy[at] = '\r'; break;                          /* a lone CR or a field short */
    case 2: copy[at] = '"'; break;                           /* a quote opened: later error */
    default: {
      const char *nl = memchr (copy + at, '\n', len - at);
      if (nl)
        memmove (copy + at, nl + 1, (size_t) (copy + len - nl - 1)), e = len - (size_t)
          (nl + 1 - (copy + at));
      memcpy (copy + e, "1,2\n", 4);                         /* a record with 2 fields */
      e += 4;
    }
    }
    same_both_ways ("threads errors", copy, e, 2048 + (size_t) k * 997, NULL);
    same_both_ways ("threads errors", copy, e, 64, NULL);
  }
  bl_table_opts_init (&opt);
  opt.max_levels = 9;                                        /* 10 sites: fails somewhere */
  same_both_ways ("threads max_levels", text, len, 4096, &opt);
  opt.max_levels = 10;
  same_both_ways ("threads max_levels at limit", text, len, 4096, &opt);
  free (copy);
  free (text);
}
END_TEST

START_TEST (table_threads_options)
{
  /* Defaults, forced categorical, TSV and decimal comma through the parallel path. */
  static const char *const cat[] = { "late" };
  size_t len;
  char *text = random_csv (99, 5000, 0, 0, &len);
  bl_table_opts opt;
  bl_table_opts_init (&opt);
  ck_assert_uint_eq (opt.threads, 2);
  ck_assert_ptr_null ((const void *) opt.cancel);
  ck_assert_uint_eq (opt.chunk, BL_TABLE_CHUNK);
  opt.categorical = cat;
  opt.n_categorical = 1;
  same_both_ways ("threads forced categorical", text, len, 3000, &opt);
  for (size_t i = 0; i < len; i++) {     /* the same bytes as ';'-separated decimal commas */
    if (text[i] == ',')
      text[i] = ';';
    else if (text[i] == '.')
      text[i] = ',';
  }
  bl_table_opts_init (&opt);
  opt.delimiter = ';';
  opt.decimal_comma = 1;
  same_both_ways ("threads decimal comma", text, len, 5000, &opt);
  free (text);
  /* An input smaller than one step, and one with only a header. */
  same_both_ways ("threads small", "a,b\n1,2\n3,x\n", 12, 0, NULL);
  same_both_ways ("threads header only", "a,b\n", 4, 64, NULL);
  same_both_ways ("threads trailing empty lines", "a\n1\n2\n3\n\n\n\n", 12, 64, NULL);
}
END_TEST

START_TEST (table_threads_gzip)
{
  /* gzip inflated on the producer thread (steps small enough that it starts) gives the
     sequential table; a truncated stream fails the same way. */
  size_t len, zlen;
  char *text = random_csv (2024, 20000, 5, 7, &len);
  unsigned char *z = test_gzip_bytes (text, len, &zlen);
  char dir[512], path[600];
  bl_table_opts o1, o2;
  bl_err e1 = { 0 }, e2 = { 0 };
  bl_table *a, *b;
  same_both_ways ("threads gzip mem", z, zlen, 65536, NULL);
  same_both_ways ("threads gzip mem, cut", z, zlen - 9, 65536, NULL);
  same_both_ways ("threads gzip mem, cut early", z, zlen / 2, 65536, NULL);
  test_tmpdir (dir, sizeof dir);
  snprintf (path, sizeof path, "%s/fleet.csv.gz", dir);
  test_write_file (path, z, zlen);
  bl_table_opts_init (&o1);
  o2 = o1;
  o1.threads = 1;
  o2.chunk = 1 << 16;
  a = bl_table_read (path, &o1, &e1);
  b = bl_table_read (path, &o2, &e2);
  ck_assert_msg (a && b, "threads gzip file: %s / %s", e1.msg, e2.msg);
  same_table ("threads gzip file", a, b);
  bl_table_free (a);
  bl_table_free (b);
  z[zlen / 3] ^= 0x55;                  /* damage: the same message both ways */
  test_write_file (path, z, zlen);
  a = bl_table_read (path, &o1, &e1);
  b = bl_table_read (path, &o2, &e2);
  ck_assert_msg (!a && !b, "threads gzip corrupt: read succeeded");
  ck_assert_int_eq (e1.code, e2.code);
  ck_assert_str_eq (e1.where, e2.where);
  ck_assert_str_eq (e1.msg, e2.msg);
  unlink (path);
  rmdir (dir);
  free (z);
  free (text);
}
END_TEST

START_TEST (table_cancel)
{
  /* A set cancel flag: BL_ECANCEL, nothing kept, with one or two threads; an unset flag
     changes nothing. */
  size_t len;
  char *text = random_csv (3, 2000, 0, 0, &len);
  volatile sig_atomic_t flag = 1;
  bl_table_opts opt;
  bl_table *t;
  bl_table_opts_init (&opt);
  opt.cancel = &flag;
  for (unsigned th = 1; th <= 2; th++) {
    bl_err err = { 0 };
    opt.threads = th;
    flag = 1;
    t = bl_table_read_mem (text, len, "c.csv", &opt, &err);
    ck_assert_msg (t == NULL, "cancel threads %u: read succeeded", th);
    ck_assert_int_eq (err.code, BL_ECANCEL);
    ck_assert_str_eq (err.where, "c.csv");
    ck_assert_str_eq (err.msg, "reading was cancelled");
    flag = 0;
    t = bl_table_read_mem (text, len, "c.csv", &opt, &err);
    ck_assert_msg (t != NULL, "cancel threads %u, flag clear: %s", th, err.msg);
    ck_assert_uint_eq (bl_table_nrows (t), 2000);
    bl_table_free (t);
  }
  free (text);
}
END_TEST

START_TEST (table_threads_alloc_fail)
{
  /* The alloc-fail loop through the parallel path (small steps, a categorical column, a
     column typed late): every failure is BL_ENOMEM until the read succeeds, and then the
     table is the sequential one. */
  size_t len;
  char *text = random_csv (11, 600, 300, 400, &len);
  bl_table_opts opt;
  unsigned long n;
  bl_table *ref;
  bl_err err = { 0 };
  bl_table_opts_init (&opt);
  opt.threads = 1;
  ref = bl_table_read_mem (text, len, "a.csv", &opt, &err);
  ck_assert_msg (ref != NULL, "threads alloc fail: %s", err.msg);
  opt.threads = 2;
  opt.chunk = 8192;
  bl_alloc_fail_at (0);
  bl_table_free (bl_table_read_mem (text, len, "a.csv", &opt, &err));
  if (bl_alloc_count () == 0) {
    bl_table_free (ref);
    free (text);
    return;                     /* built without --enable-alloc-fail */
  }
  for (n = 1; n < 100000; n++) {
    bl_table *t;
    bl_alloc_fail_at (n);
    t = bl_table_read_mem (text, len, "a.csv", &opt, &err);
    bl_alloc_fail_at (0);
    if (t) {
      same_table ("threads alloc fail", ref, t);
      bl_table_free (t);
      break;
    }
    ck_assert_msg (err.code == BL_ENOMEM, "threads alloc fail N=%lu: code %d (%s)", n,
                   err.code, err.msg);
  }
  ck_assert_msg (n > 10 && n < 100000, "threads alloc fail: ended at N=%lu", n);
  bl_table_free (ref);
  free (text);
}
END_TEST

/* bl_table_opts.keep (table.h): columns not asked for are read past, not stored and not
   checked, while the record structure (field counts, quotes) still is; the kept columns are
   the same as in a full reading, on one thread and on two (documented behaviour). */
START_TEST (table_keep_columns)
{
  const char *const keep[] = { "y", "x3", "nowhere" };
  const size_t nrows = 30000;
  char *text = malloc (nrows * 80 + 64), *p;
  bl_table_opts o;
  bl_err err = { 0 };
  bl_table *full, *part;
  strcpy (text, "a,y,junk,x3,\"q\"\n");
  p = text + strlen (text);
  for (size_t i = 0; i < nrows; i++)
    p += sprintf (p, "%zu,%.4f,%s,%s,\"%zu,%zu\"\n", i, 0.25 * (double) i,
                  i % 7 ? "12.5kg" : "", i % 11 ? "lv" : "NA", i, i + 1);
  bl_table_opts_init (&o);
  o.categorical = (const char *const[]) { "junk" };
  o.n_categorical = 1;
  full = read_str (text, &o, &err);
  ck_assert_msg (full != NULL, "full: %s: %s", err.where, err.msg);
  for (unsigned th = 1; th <= 2; th++) {
    bl_table_opts_init (&o);
    o.threads = th;
    o.chunk = 4096;
    o.keep = keep;
    o.n_keep = 3;
    part = read_str (text, &o, &err);   /* "12.5kg" in a numeric-looking column: skipped */
    ck_assert_msg (part != NULL, "threads %u: %s: %s", th, err.where, err.msg);
    ck_assert_uint_eq (bl_table_nrows (part), nrows);
    ck_assert_uint_eq (bl_table_ncols (part), 5);
    ck_assert_int_eq (bl_table_find (part, "a"), -1);
    ck_assert_int_eq (bl_table_find (part, "junk"), -1);
    ck_assert_int_eq (bl_table_find (part, "q"), -1);
    ck_assert_int_eq (bl_table_find (part, "y"), 1);
    ck_assert_int_eq (bl_table_find (part, "x3"), 3);
    ck_assert (bl_table_num (part, 0) == NULL && bl_table_codes (part, 2) == NULL);
    for (size_t i = 0; i < nrows; i++) {
      ck_assert (bl_table_num (part, 1)[i] == 0.25 * (double) i);
      ck_assert_int_eq (bl_table_codes (part, 3)[i], bl_table_codes (full, 3)[i]);
      ck_assert_uint_eq (bl_table_line (part, i), bl_table_line (full, i));
    }
    bl_table_free (part);
  }
  bl_table_free (full);
  /* a record with a wrong field count is still an error, named by its line */
  bl_table_opts_init (&o);
  o.keep = keep;
  o.n_keep = 1;
  expect_fail ("keep: field count", "y,z\n1,2\n3\n", &o, BL_EDATA, "mem.csv:3",
               "record has 1 field, header has 2");
  free (text);
}
END_TEST

/* The documented limits (table.h, doc/limits.md): a record longer than max_record bytes is
   refused at its first line, before the buffer grows past the limit, on one thread and two;
   a header of more than BL_TABLE_MAX_COLS fields is refused. */
START_TEST (table_limits)
{
  const size_t lim = (size_t) 1 << 16;
  char *text = malloc (4 * lim + 64), *p;
  bl_table_opts o;
  size_t n;
  strcpy (text, "y,note\n1,a\n2,b\n3,");
  p = text + strlen (text);
  memset (p, 'z', 2 * lim);
  strcpy (p + 2 * lim, "\n4,c\n");
  for (unsigned th = 1; th <= 2; th++) {
    bl_table_opts_init (&o);
    o.threads = th;
    o.chunk = 4096;
    o.max_record = lim;
    expect_fail ("record limit", text, &o, BL_EDATA, "mem.csv:4",
                 "a record longer than 65536 bytes starts here");
  }
  /* cut in two: the first part (half the limit) is read, the rest (1.5 times) refused */
  text[strlen ("y,note\n1,a\n2,b\n3,") + lim / 2] = '\n';
  bl_table_opts_init (&o);
  o.max_record = lim;
  expect_fail ("record limit, second part", text, &o, BL_EDATA, "mem.csv:5",
               "a record longer than 65536 bytes starts here");
  free (text);
  /* BL_TABLE_MAX_COLS + 1 header names */
  text = malloc ((size_t) (BL_TABLE_MAX_COLS + 1) * 9 + 16);
  for (n = 0, p = text; n <= BL_TABLE_MAX_COLS; n++)
    p += sprintf (p, "%sc%zu", n ? "," : "", n);
  strcpy (p, "\n");
  expect_fail ("column limit", text, NULL, BL_EDATA, "mem.csv:1",
               "the header has more than 1000000 columns");
  free (text);
}
END_TEST

static Suite *
table_suite (void)
{
  Suite *s = suite_create ("table");
  TCase *reference = tcase_create ("reference");
  TCase *basics = tcase_create ("basics");
  TCase *errors = tcase_create ("errors");
  tcase_set_timeout (reference, 120);
  tcase_set_timeout (basics, 120);
  tcase_set_timeout (errors, 120);
  tcase_add_test (reference, table_rfc4180_quoting);
  tcase_add_test (reference, table_line_after_multiline);
  tcase_add_test (reference, table_rounding_hard);
  tcase_add_test (reference, table_rounding_random);
  tcase_add_test (reference, table_rounding_random_comma);
  tcase_add_test (basics, table_crlf_bom_final_line);
  tcase_add_test (basics, table_trailing_empty_lines);
  tcase_add_test (basics, table_header_only);
  tcase_add_test (basics, table_missing_markers);
  tcase_add_test (basics, table_number_forms);
  tcase_add_test (basics, table_categorical_order);
  tcase_add_test (basics, table_categorical_many_levels);
  tcase_add_test (basics, table_forced_categorical);
  tcase_add_test (basics, table_tsv_by_name);
  tcase_add_test (basics, table_semicolon_decimal_comma);
  tcase_add_test (basics, table_gzip_file);
  tcase_add_test (basics, table_gzip_mem_big);
  tcase_add_test (basics, table_long_field);
  tcase_add_test (basics, table_many_columns);
  tcase_add_test (basics, table_stdin);
  tcase_add_test (basics, table_keep_columns);
  tcase_add_test (errors, table_limits);
  tcase_add_test (basics, table_threads_identical);
  tcase_add_test (basics, table_threads_options);
  tcase_add_test (basics, table_threads_uneven_rows);
  tcase_add_test (basics, table_rounding_short_forms);
  tcase_add_test (basics, table_threads_gzip);
  tcase_add_test (errors, table_not_a_number);
  tcase_add_test (basics, table_type_not_by_position);
  tcase_add_test (basics, table_type_majority);
  tcase_add_test (basics, table_type_random_mix);
  tcase_add_test (basics, table_type_reread_file);
  tcase_add_test (errors, table_refused_numbers);
  tcase_add_test (errors, table_refused_numbers_as_labels);
  tcase_add_test (errors, table_field_count);
  tcase_add_test (errors, table_quote_errors);
  tcase_add_test (errors, table_nul_and_cr);
  tcase_add_test (errors, table_no_header);
  tcase_add_test (errors, table_header_names);
  tcase_add_test (errors, table_max_levels);
  tcase_add_test (errors, table_option_errors);
  tcase_add_test (errors, table_io_errors);
  tcase_add_test (errors, table_alloc_fail);
  tcase_add_test (errors, table_threads_errors_identical);
  tcase_add_test (errors, table_cancel);
  tcase_add_test (errors, table_threads_alloc_fail);
  suite_add_tcase (s, reference);
  suite_add_tcase (s, basics);
  suite_add_tcase (s, errors);
  return s;
}

int
main (void)
{
  return test_run_suite (table_suite (), 0);
}
