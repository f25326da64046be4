/* fuzz_terms.c -- libFuzzer harness for the term syntax (terms.h: bl_terms_parse).

   The input, cut at its first NUL, is parsed as a term list.  On success the harness checks
   the trees (every node has the fields of its kind, labels agree with their children), then
   that the canonical text (bl_terms_text) parses again to the same labels, and that
   bl_terms_text truncates like snprintf at every capacity up to its length.  On failure the
   error must be BL_ESPEC or BL_ENOMEM with where "--terms".  Inputs of at least 8 bytes are
   also taken as a double for bl_format_shortest, which must read back exactly.  Any
   violation abort()s.  Everything allocated is freed: the harness runs under LeakSanitizer. */
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "terms.h"

int LLVMFuzzerTestOneInput (const uint8_t *data, size_t size);

static void
fail (const char *what, const char *detail)
{
  fprintf (stderr, "fuzz_terms: %s: %s\n", what, detail);
  abort ();
}

/* Check one tree; returns its depth of function calls. */
static size_t
check_node (const bl_term *t)
{
  size_t da = 0, db = 0;
  if (!t || !t->label || !t->label[0])
    fail ("tree", "missing node or label");
  switch (t->kind) {
  case BL_TERM_COL:
    if (!t->name || t->a || t->b)
      fail ("tree", "column node with arguments or no name");
    return 0;
  case BL_TERM_LOG: case BL_TERM_SQRT: case BL_TERM_EXP:
    if (!t->a || t->b)
      fail ("tree", "unary node without one argument");
    break;
  case BL_TERM_POW:
    if (!t->a || t->b || !isfinite (t->k))
      fail ("tree", "pow node malformed or with a non-finite power");
    break;
  case BL_TERM_CROSS:
    if (!t->a || !t->b)
      fail ("tree", "cross node without two arguments");
    break;
  default:
    fail ("tree", "unknown kind");
  }
  if (!strstr (t->label, t->a->label) || (t->b && !strstr (t->label, t->b->label)))
    fail ("tree", "a label does not contain its arguments' labels");
  da = check_node (t->a);
  if (t->b)
    db = check_node (t->b);
  return 1 + (da > db ? da : db);
}

static void
check_shortest (const uint8_t *data)
{
  double x;
  char buf[32], *end;
  memcpy (&x, data, sizeof x);
  if (!isfinite (x))
    return;
  memset (buf, 'x', sizeof buf);
  bl_format_shortest (x, buf);
  if (!memchr (buf, '\0', sizeof buf))
    fail ("bl_format_shortest", "not NUL-terminated");
  if (strtod (buf, &end) != x || *end) {
    char d[80];
    snprintf (d, sizeof d, "%.17g formatted as '%s'", x, buf);
    fail ("bl_format_shortest", d);
  }
}

int
LLVMFuzzerTestOneInput (const uint8_t *data, size_t size)
{
  char *text = malloc (size + 1), *canon, *small;
  bl_err err = { 0 }, err2 = { 0 };
  bl_terms *t, *t2;
  size_t n, len, cap, i;

  if (size >= 8)
    check_shortest (data);
  if (!text)
    return 0;
  memcpy (text, data, size);
  text[size] = '\0';
  t = bl_terms_parse (text, "--terms", &err);
  if (!t) {
    if ((err.code != BL_ESPEC && err.code != BL_ENOMEM) || strcmp (err.where, "--terms"))
      fail ("parse", "a failure that is not BL_ESPEC at '--terms'");
    if (!err.msg[0])
      fail ("parse", "an error without a message");
    free (text);
    return 0;
  }
  n = bl_terms_count (t);
  if (n == 0)
    fail ("parse", "an empty list accepted");
  for (i = 0; i < n; i++) {
    const bl_term *a = bl_terms_get (t, i);
    if (check_node (a) > BL_TERMS_MAX_DEPTH)
      fail ("parse", "nesting deeper than BL_TERMS_MAX_DEPTH accepted");
    for (size_t k = 0; k < i; k++)
      if (strcmp (bl_terms_get (t, k)->label, a->label) == 0)
        fail ("parse", "a duplicate term accepted");
  }

  /* the canonical text reads back to the same list */
  len = bl_terms_text (t, NULL, 0);
  canon = malloc (len + 1);
  small = malloc (len + 1);
  if (!canon || !small)
    abort ();
  if (bl_terms_text (t, canon, len + 1) != len || strlen (canon) != len)
    fail ("bl_terms_text", "length differs from what it reported");
  for (cap = 1; cap <= len; cap = cap < 40 || cap + 3 >= len ? cap + 1 : cap + len / 16 + 1) {
    memset (small, 'x', len + 1);
    if (bl_terms_text (t, small, cap) != len || strlen (small) != cap - 1
        || memcmp (small, canon, cap - 1) != 0)
      fail ("bl_terms_text", "truncation is not as snprintf");
  }
  t2 = bl_terms_parse (canon, "--terms", &err2);
  if (!t2) {
    char d[1800];
    snprintf (d, sizeof d, "canonical text '%.1000s' does not parse: %s", canon, err2.msg);
    fail ("round trip", d);
  }
  if (bl_terms_count (t2) != n)
    fail ("round trip", "term count changed");
  for (i = 0; i < n; i++)
    if (strcmp (bl_terms_get (t, i)->label, bl_terms_get (t2, i)->label)) {
      char d[1800];
      snprintf (d, sizeof d, "label '%.800s' became '%.800s'", bl_terms_get (t, i)->label,
                bl_terms_get (t2, i)->label);
      fail ("round trip", d);
    }
  bl_terms_free (t2);
  free (small);
  free (canon);
  bl_terms_free (t);
  free (text);
  return 0;
}
