/* check_terms.c -- the term-syntax parser: constructs, canonical labels, errors, allocation
   failures.  The syntax is ballast's own; the expected labels and messages come from the
   interface in src/lib/terms.h. */
#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "alloc.h"
#include "terms.h"
#include "testutil.h"

/* Parse TEXT and require success; the failure message names the case. */
static bl_terms *
parse_ok (const char *text)
{
  bl_err err = { 0 };
  bl_terms *t = bl_terms_parse (text, "--terms", &err);
  ck_assert_msg (t != NULL, "parse '%s': %s: %s", text, err.where, err.msg);
  return t;
}

/* Parse TEXT and require a BL_ESPEC failure whose message contains FRAG. */
static void
parse_fails (const char *text, const char *frag)
{
  bl_err err = { 0 };
  bl_terms *t = bl_terms_parse (text, "--terms", &err);
  ck_assert_msg (t == NULL, "parse '%s' should fail", text);
  ck_assert_msg (err.code == BL_ESPEC, "'%s': code %d", text, err.code);
  ck_assert_msg (strcmp (err.where, "--terms") == 0, "'%s': where '%s'", text, err.where);
  ck_assert_msg (strstr (err.msg, frag) != NULL, "'%s': message '%s' lacks '%s'", text,
                 err.msg, frag);
}

/* ------------------------------------------------------------------ reference */

/* Shortest round-trip decimals: the expected strings are Python 3's repr() of the same
   doubles (shortest-round-trip formatting, Gay 1990 / Steele & White 1990), checked with
   python3 when this test was written.  Python appends ".0" to an integral value in fixed
   notation (repr (1e15) is '1000000000000000.0'); ballast does not, so those are written
   without it here. */
START_TEST (terms_format_shortest_reference)
{
  static const struct { double x; const char *s; } c[] = {
    { 2.0, "2" }, { 0.5, "0.5" }, { 0.1, "0.1" }, { 1.0 / 3.0, "0.3333333333333333" },
    { 2.0 / 3.0, "0.6666666666666666" }, { 1e22, "1e+22" }, { 5e-324, "5e-324" },
    { 123456789012345680.0, "1.2345678901234568e+17" }, { -2.385, "-2.385" },
    { 100.0, "100" }, { 1e16, "1e+16" }, { 0.30000000000000004, "0.30000000000000004" },
    { 1.7976931348623157e308, "1.7976931348623157e+308" }, { -0.0, "-0" },
    { 1e15, "1000000000000000" }, { 1e-5, "1e-05" }, { 0.0001, "0.0001" },
    { 123.456, "123.456" }, { 9007199254740992.0, "9007199254740992" },
    { -1.5e-7, "-1.5e-07" }
  };
  for (size_t i = 0; i < sizeof c / sizeof c[0]; i++) {
    char buf[32];
    bl_format_shortest (c[i].x, buf);
    ck_assert_msg (strcmp (buf, c[i].s) == 0, "format_shortest c[%zu]: '%s' != '%s'", i, buf,
                   c[i].s);
  }
}
END_TEST

/* ------------------------------------------------------------------ identities */

/* strtod (format (x)) == x for a spread of values (the defining property). */
START_TEST (terms_format_shortest_roundtrip)
{
  double x = 2.385;
  for (int i = 0; i < 2000; i++) {
    char buf[32];
    bl_format_shortest (x, buf);
    ck_assert_msg (strtod (buf, NULL) == x, "roundtrip i=%d: %.17g -> '%s'", i, x, buf);
    ck_assert_msg (strlen (buf) < 32, "roundtrip i=%d: length", i);
    x = -x * 1.7318 + 1e-3 / (i + 1.0);
    if (fabs (x) > 1e300)
      x = 1e-300 * (i % 7 + 1);
  }
}
END_TEST

/* Parsing the canonical text of a list gives the same labels again (labels are canonical). */
START_TEST (terms_text_reparses)
{
  static const char *const texts[] = {
    "age, load, log(hours), sqrt(d), pow(d, 2), cross(site, age)",
    " log ( [flow rate] ) ,\tpow([a]]b], -0.25),cross(cross(a,b),c) ",
    "exp(sqrt(log(x))), pow(pow(d,0.5),3), [2x], [x-y], _a.1, cross(log(u), [v w])",
    "log, pow, cross, exp, sqrt"
  };
  for (size_t i = 0; i < sizeof texts / sizeof texts[0]; i++) {
    char buf[512], buf2[512];
    bl_terms *t = parse_ok (texts[i]), *t2;
    const size_t len = bl_terms_text (t, buf, sizeof buf);
    ck_assert_msg (len == strlen (buf), "reparse texts[%zu]: length %zu", i, len);
    t2 = parse_ok (buf);
    ck_assert_msg (bl_terms_count (t2) == bl_terms_count (t), "reparse texts[%zu]: count", i);
    bl_terms_text (t2, buf2, sizeof buf2);
    ck_assert_msg (strcmp (buf, buf2) == 0, "reparse texts[%zu]: '%s' != '%s'", i, buf, buf2);
    for (size_t j = 0; j < bl_terms_count (t); j++)
      ck_assert_msg (strcmp (bl_terms_get (t, j)->label, bl_terms_get (t2, j)->label) == 0,
                     "reparse texts[%zu] term %zu", i, j);
    bl_terms_free (t);
    bl_terms_free (t2);
  }
}
END_TEST

/* ------------------------------------------------------------------ basics */

START_TEST (terms_every_construct)
{
  bl_terms *t = parse_ok ("age, load, log(hours), sqrt(d), exp(z), pow(d, 2), "
                          "cross(site, age)");
  const bl_term *x;
  ck_assert_uint_eq (bl_terms_count (t), 7);
  x = bl_terms_get (t, 0);
  ck_assert_msg (x->kind == BL_TERM_COL && strcmp (x->name, "age") == 0, "construct col");
  ck_assert_str_eq (x->label, "age");
  ck_assert_ptr_null (x->a);
  x = bl_terms_get (t, 2);
  ck_assert_msg (x->kind == BL_TERM_LOG && x->a->kind == BL_TERM_COL, "construct log");
  ck_assert_str_eq (x->a->name, "hours");
  ck_assert_str_eq (x->label, "log(hours)");
  ck_assert_ptr_null (x->b);
  x = bl_terms_get (t, 3);
  ck_assert_msg (x->kind == BL_TERM_SQRT, "construct sqrt");
  ck_assert_str_eq (x->label, "sqrt(d)");
  x = bl_terms_get (t, 4);
  ck_assert_msg (x->kind == BL_TERM_EXP, "construct exp");
  ck_assert_str_eq (x->label, "exp(z)");
  x = bl_terms_get (t, 5);
  ck_assert_msg (x->kind == BL_TERM_POW && x->k == 2.0, "construct pow");
  ck_assert_str_eq (x->label, "pow(d,2)");
  x = bl_terms_get (t, 6);
  ck_assert_msg (x->kind == BL_TERM_CROSS, "construct cross");
  ck_assert_str_eq (x->a->name, "site");
  ck_assert_str_eq (x->b->name, "age");
  ck_assert_str_eq (x->label, "cross(site,age)");
  ck_assert_ptr_null (bl_terms_get (t, 7));
  bl_terms_free (t);
}
END_TEST

START_TEST (terms_canonical_labels)
{
  static const struct { const char *in, *label; } c[] = {
    { "log( hours )", "log(hours)" }, { "pow(d, 0.5)", "pow(d,0.5)" },
    { "pow(d, 2.0)", "pow(d,2)" }, { "pow(d,1e2)", "pow(d,100)" },
    { "pow(d, -1)", "pow(d,-1)" }, { "pow(d, .125)", "pow(d,0.125)" },
    { "pow(d, 0x10)", "pow(d,16)" }, { "pow(d,+3)", "pow(d,3)" },
    { "cross( site , age )", "cross(site,age)" }, { "\tsqrt\n(\rd )", "sqrt(d)" },
    { "log (x)", "log(x)" }, { "_a.1", "_a.1" }, { ".x", ".x" },
    { "pow(d, 2.385)", "pow(d,2.385)" }, { "pow(d,0.1)", "pow(d,0.1)" }
  };
  for (size_t i = 0; i < sizeof c / sizeof c[0]; i++) {
    bl_terms *t = parse_ok (c[i].in);
    ck_assert_msg (bl_terms_count (t) == 1, "labels c[%zu]: count", i);
    ck_assert_msg (strcmp (bl_terms_get (t, 0)->label, c[i].label) == 0,
                   "labels c[%zu]: '%s' != '%s'", i, bl_terms_get (t, 0)->label, c[i].label);
    bl_terms_free (t);
  }
}
END_TEST

START_TEST (terms_bracket_names)
{
  static const struct { const char *in, *name, *label; } c[] = {
    { "[flow rate]", "flow rate", "[flow rate]" }, { "[age]", "age", "age" },
    { "[a]]b]", "a]b", "[a]]b]" }, { "[]]]", "]", "[]]]" }, { "[2x]", "2x", "[2x]" },
    { "[x-y]", "x-y", "[x-y]" }, { "[a,b]", "a,b", "[a,b]" }, { "[log(x)]", "log(x)",
    "[log(x)]" }, { "[ pad ]", " pad ", "[ pad ]" }, { "[[x]", "[x", "[[x]" },
    { "[caf\xc3\xa9]", "caf\xc3\xa9", "[caf\xc3\xa9]" }
  };
  for (size_t i = 0; i < sizeof c / sizeof c[0]; i++) {
    bl_terms *t = parse_ok (c[i].in);
    const bl_term *x = bl_terms_get (t, 0);
    ck_assert_msg (bl_terms_count (t) == 1 && x->kind == BL_TERM_COL, "brackets c[%zu]", i);
    ck_assert_msg (strcmp (x->name, c[i].name) == 0, "brackets c[%zu]: name '%s'", i, x->name);
    ck_assert_msg (strcmp (x->label, c[i].label) == 0, "brackets c[%zu]: label '%s'", i,
                   x->label);
    bl_terms_free (t);
  }
  {
    bl_terms *t = parse_ok ("log([flow rate]), cross([pump site], [a]]b])");
    ck_assert_str_eq (bl_terms_get (t, 0)->label, "log([flow rate])");
    ck_assert_str_eq (bl_terms_get (t, 0)->a->name, "flow rate");
    ck_assert_str_eq (bl_terms_get (t, 1)->label, "cross([pump site],[a]]b])");
    bl_terms_free (t);
  }
}
END_TEST

START_TEST (terms_nesting)
{
  bl_terms *t = parse_ok ("log(pow(d,2)), cross(cross(a,b),c), sqrt(exp(log(x))), "
                          "cross(log(u), pow(v, 0.5))");
  const bl_term *x = bl_terms_get (t, 0);
  ck_assert_str_eq (x->label, "log(pow(d,2))");
  ck_assert_msg (x->a->kind == BL_TERM_POW && x->a->k == 2.0, "nesting log(pow)");
  ck_assert_str_eq (x->a->a->name, "d");
  x = bl_terms_get (t, 1);
  ck_assert_str_eq (x->label, "cross(cross(a,b),c)");
  ck_assert_msg (x->a->kind == BL_TERM_CROSS && x->b->kind == BL_TERM_COL, "nesting cross");
  ck_assert_str_eq (x->a->label, "cross(a,b)");
  ck_assert_str_eq (bl_terms_get (t, 2)->label, "sqrt(exp(log(x)))");
  ck_assert_str_eq (bl_terms_get (t, 3)->label, "cross(log(u),pow(v,0.5))");
  bl_terms_free (t);
}
END_TEST

/* A function word without a following '(' is a column name (terms.h grammar note). */
START_TEST (terms_function_words_as_names)
{
  bl_terms *t = parse_ok ("log, pow, cross , exp,sqrt, log(log)");
  static const char *const names[] = { "log", "pow", "cross", "exp", "sqrt" };
  for (size_t i = 0; i < 5; i++) {
    ck_assert_msg (bl_terms_get (t, i)->kind == BL_TERM_COL, "function words %zu: kind", i);
    ck_assert_msg (strcmp (bl_terms_get (t, i)->name, names[i]) == 0, "function words %zu", i);
  }
  ck_assert_str_eq (bl_terms_get (t, 5)->label, "log(log)");
  bl_terms_free (t);
}
END_TEST

START_TEST (terms_text_join_and_truncate)
{
  bl_terms *t = parse_ok ("age ,log( hours ),cross(site,age)");
  char buf[64], small[8];
  const char *full = "age, log(hours), cross(site,age)";
  ck_assert_uint_eq (bl_terms_text (t, buf, sizeof buf), strlen (full));
  ck_assert_str_eq (buf, full);
  ck_assert_uint_eq (bl_terms_text (t, small, sizeof small), strlen (full));
  ck_assert_str_eq (small, "age, lo");              /* truncated, NUL-terminated */
  ck_assert_uint_eq (bl_terms_text (t, NULL, 0), strlen (full));
  bl_terms_free (t);
  ck_assert_uint_eq (bl_terms_count (NULL), 0);
  bl_terms_free (NULL);
}
END_TEST

/* Nesting up to BL_TERMS_MAX_DEPTH calls is accepted; one more is an error. */
START_TEST (terms_depth_limit)
{
  char buf[1024];
  size_t k = 0;
  bl_terms *t;
  for (int i = 0; i < BL_TERMS_MAX_DEPTH; i++)
    k += (size_t) snprintf (buf + k, sizeof buf - k, "log(");
  k += (size_t) snprintf (buf + k, sizeof buf - k, "x");
  for (int i = 0; i < BL_TERMS_MAX_DEPTH; i++)
    k += (size_t) snprintf (buf + k, sizeof buf - k, ")");
  t = parse_ok (buf);
  bl_terms_free (t);
  memmove (buf + 4, buf, k + 1);
  memcpy (buf, "log(", 4);
  strcat (buf, ")");
  parse_fails (buf, "nested more than 64 deep");
}
END_TEST

/* ------------------------------------------------------------------ errors */

START_TEST (terms_error_messages)
{
  static const struct { const char *in, *msg; } c[] = {
    { "a,log(hours]", "at character 12: expected ')' after 'hours'" },
    { "age, log(hours", "at character 15: expected ')' after 'hours'" },
    { "age,lg(x)", "at character 5: unknown function 'lg'" },
    { "Log(x)", "at character 1: unknown function 'Log'" },
    { "lg (x)", "at character 1: unknown function 'lg'" },
    { "age,  ,x", "empty term at character 7" },
    { "age,", "empty term at character 5" },
    { ",age", "empty term at character 1" },
    { "log()", "empty term at character 5" },
    { "cross(a,)", "empty term at character 9" },
    { "age, load, age", "duplicate term 'age'" },
    { "age, [age]", "duplicate term 'age'" },
    { "log( x ), log(x)", "duplicate term 'log(x)'" },
    { "pow(d,2), pow(d,2.0)", "duplicate term 'pow(d,2)'" },
    { "pow(d, x)", "at character 8: pow needs a finite number as its second argument" },
    { "pow(d, inf)", "at character 8: pow needs a finite number as its second argument" },
    { "pow(d, nan)", "at character 8: pow needs a finite number as its second argument" },
    { "pow(d,1e999)", "at character 7: pow needs a finite number as its second argument" },
    { "pow(d,)", "at character 7: pow needs a finite number as its second argument" },
    { "pow(d)", "at character 6: expected ',' after 'd'" },
    { "pow(d,2", "at character 8: expected ')' after '2'" },
    { "pow(d, 2 3)", "at character 10: expected ')' after '2'" },
    { "cross(a b)", "at character 9: expected ',' after 'a'" },
    { "cross(a, b", "at character 11: expected ')' after 'b'" },
    { "cross(a, b, c)", "at character 11: expected ')' after 'b'" },
    { "log(x, y)", "at character 6: expected ')' after 'x'" },
    { "age load", "at character 5: expected ',' or the end of the list after 'age'" },
    { "log(x))", "at character 7: expected ',' or the end of the list after 'log(x)'" },
    { "age, 2x", "at character 6: expected a column name, '[name]' or a function, found '2'" },
    { "age ~ load", "at character 5: expected ',' or the end of the list after 'age'" },
    { "+age", "at character 1: expected a column name, '[name]' or a function, found '+'" },
    { "age,\x01", "at character 5: expected a column name, '[name]' or a function, found "
      "byte 0x01" },
    { "[flow rate", "at character 11: expected ']' to close the name begun at character 1" },
    { "x, [a]]", "at character 8: expected ']' to close the name begun at character 4" },
    { "[]", "at character 1: empty name in brackets" },
    { "", "no terms given" },
    { " \t ", "no terms given" }
  };
  for (size_t i = 0; i < sizeof c / sizeof c[0]; i++)
    parse_fails (c[i].in, c[i].msg);
}
END_TEST

START_TEST (terms_error_null_text_and_err)
{
  bl_err err = { 0 };
  ck_assert_ptr_null (bl_terms_parse (NULL, "job 'a'", &err));
  ck_assert_int_eq (err.code, BL_ESPEC);
  ck_assert_str_eq (err.where, "job 'a'");
  ck_assert_str_eq (err.msg, "no terms given");
  ck_assert_ptr_null (bl_terms_parse ("log(", "--terms", NULL));   /* ERR may be NULL */
}
END_TEST

/* The N-th allocation fails for N = 1, 2, ... until the parse succeeds: each failure is NULL +
   BL_ENOMEM (ASan reports any leak at exit).  SQLite's malloc tests do the same. */
START_TEST (terms_error_alloc_failure)
{
  const char *text = "age, log([flow rate]), pow(d, 0.5), cross(cross(site, age), exp(z)), "
                     "sqrt(pow(q,3)), [a]]b], l1, l2, l3, l4, l5, l6, l7, l8";
  unsigned long n;
  bl_terms *t = NULL;
  bl_alloc_fail_at (0);
  t = bl_terms_parse (text, "--terms", NULL);
  ck_assert_ptr_nonnull (t);
  bl_terms_free (t);
  if (bl_alloc_count () == 0)
    return;                                 /* built without BL_ALLOC_FAIL: nothing to do */
  for (n = 1;; n++) {
    bl_err err = { 0 };
    bl_alloc_fail_at (n);
    t = bl_terms_parse (text, "--terms", &err);
    if (t)
      break;
    ck_assert_msg (err.code == BL_ENOMEM, "alloc failure n=%lu: code %d (%s)", n, err.code,
                   err.msg);
    ck_assert_str_eq (err.where, "--terms");
  }
  bl_alloc_fail_at (0);
  ck_assert_msg (n > 10, "alloc failure: only %lu allocations", n);
  bl_terms_free (t);
}
END_TEST

static Suite *
terms_suite (void)
{
  Suite *s = suite_create ("terms");
  TCase *ref = tcase_create ("reference");
  TCase *idt = tcase_create ("identities");
  TCase *err = tcase_create ("errors");
  TCase *bas = tcase_create ("basics");
  tcase_add_test (ref, terms_format_shortest_reference);
  tcase_add_test (idt, terms_format_shortest_roundtrip);
  tcase_add_test (idt, terms_text_reparses);
  tcase_add_test (bas, terms_every_construct);
  tcase_add_test (bas, terms_canonical_labels);
  tcase_add_test (bas, terms_bracket_names);
  tcase_add_test (bas, terms_nesting);
  tcase_add_test (bas, terms_function_words_as_names);
  tcase_add_test (bas, terms_text_join_and_truncate);
  tcase_add_test (bas, terms_depth_limit);
  tcase_add_test (err, terms_error_messages);
  tcase_add_test (err, terms_error_null_text_and_err);
  tcase_add_test (err, terms_error_alloc_failure);
  suite_add_tcase (s, ref);
  suite_add_tcase (s, idt);
  suite_add_tcase (s, err);
  suite_add_tcase (s, bas);
  return s;
}

int
main (void)
{
  return test_run_suite (terms_suite (), 0);
}
