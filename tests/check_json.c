/* check_json.c -- the streaming JSON writer (json.h, bl_json_*): what every JSON document of
   ballast (reports, batch summaries, saved models) relies on.

   Each test writes through the writer into a temporary file and compares the bytes with the
   text expected from json.h's contract, written out here by hand; documents are also parsed
   back with Jansson, an independent reader, so that "valid JSON" is not only our own claim.
   - basics: layout (two spaces a level, ", " between members, empty containers as {} and
     []), nesting and commas, keys escaped like values, null strings, sizes, booleans;
   - identities: %.17g numbers read back to the same double (strtod and Jansson), -0 is
     written 0, every non-finite number is null;
   - escaping: quotes, backslashes, the named escapes \n \r \t, every other control
     character as \u00XX (RFC 8259, section 7), bytes >= 0x7f copied unchanged (UTF-8 passes
     through; the writer does not validate it);
   - errors: a failed write is reported by bl_json_finish and stays reported (sticky), and
     nesting beyond BL_JSON_MAX_DEPTH is reported. */
#include <check.h>
#include <float.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <jansson.h>
#include "json.h"
#include "testutil.h"

/* ---------------------------------------------------------------- helpers */

/* A writer on a temporary file, read back as text. */
typedef struct capture {
  FILE *f;
  bl_json w;
  char text[8192];
} capture;

static void
cap_open (capture *c)
{
  c->f = tmpfile ();
  ck_assert_msg (c->f != NULL, "tmpfile failed");
  bl_json_init (&c->w, c->f);
}

/* Finish the document, assert that no write failed, and return the bytes written. */
static const char *
cap_text (capture *c)
{
  size_t n;
  ck_assert_int_eq (bl_json_finish (&c->w), 0);
  ck_assert_int_eq (fflush (c->f), 0);
  rewind (c->f);
  n = fread (c->text, 1, sizeof c->text - 1, c->f);
  ck_assert_msg (n < sizeof c->text - 1, "document longer than the capture buffer");
  c->text[n] = '\0';
  fclose (c->f);
  c->f = NULL;
  return c->text;
}

/* TEXT parsed by Jansson; asserts that it is JSON (the caller decrefs). */
static json_t *
parse (const char *text)
{
  json_error_t je;
  json_t *root = json_loads (text, 0, &je);
  ck_assert_msg (root != NULL, "not JSON at %d:%d (%s): %s", je.line, je.column, je.text,
                 text);
  return root;
}

/* The document {"s": S} as the writer gives it. */
static const char *
string_doc (capture *c, const char *s)
{
  cap_open (c);
  bl_json_obj (&c->w, NULL);
  bl_json_str (&c->w, "s", s);
  bl_json_obj_end (&c->w);
  return cap_text (c);
}

/* ---------------------------------------------------------------- basics */

START_TEST (json_layout_nesting_commas)
{
  capture c;
  const char *want =
    "{\n"
    "  \"a\": \"x\",\n"
    "  \"b\": [\n"
    "    1.5,\n"
    "    null,\n"
    "    {},\n"
    "    [\n"
    "      true\n"
    "    ]\n"
    "  ],\n"
    "  \"c\": {\n"
    "    \"t\": true,\n"
    "    \"f\": false,\n"
    "    \"n\": 4294967303,\n"
    "    \"z\": 0,\n"
    "    \"s\": null\n"
    "  },\n"
    "  \"e\": [],\n"
    "  \"o\": {}\n"
    "}\n";
  json_t *root;
  cap_open (&c);
  bl_json_obj (&c.w, NULL);
  bl_json_str (&c.w, "a", "x");
  bl_json_arr (&c.w, "b");
  bl_json_num (&c.w, NULL, 1.5);
  bl_json_null (&c.w, NULL);
  bl_json_obj (&c.w, NULL);
  bl_json_obj_end (&c.w);
  bl_json_arr (&c.w, NULL);
  bl_json_bool (&c.w, NULL, 7);                  /* any nonzero is true */
  bl_json_arr_end (&c.w);
  bl_json_arr_end (&c.w);
  bl_json_obj (&c.w, "c");
  bl_json_bool (&c.w, "t", 1);
  bl_json_bool (&c.w, "f", 0);
  bl_json_size (&c.w, "n", (size_t) 4294967303ull);
  bl_json_size (&c.w, "z", 0);
  bl_json_str (&c.w, "s", NULL);
  bl_json_obj_end (&c.w);
  bl_json_arr (&c.w, "e");
  bl_json_arr_end (&c.w);
  bl_json_obj (&c.w, "o");
  bl_json_obj_end (&c.w);
  bl_json_obj_end (&c.w);
  ck_assert_str_eq (cap_text (&c), want);
  root = parse (c.text);
  ck_assert_uint_eq (json_object_size (root), 5);
  ck_assert_uint_eq (json_array_size (json_object_get (root, "b")), 4);
  ck_assert (json_is_null (json_array_get (json_object_get (root, "b"), 1)));
  ck_assert (json_is_false (json_object_get (json_object_get (root, "c"), "f")));
  ck_assert (json_is_null (json_object_get (json_object_get (root, "c"), "s")));
  json_decref (root);
}
END_TEST

START_TEST (json_top_level_array_and_scalars)
{
  capture c;
  cap_open (&c);
  bl_json_arr (&c.w, NULL);
  bl_json_str (&c.w, NULL, "p");
  bl_json_num (&c.w, NULL, -2.385);
  bl_json_arr_end (&c.w);
  ck_assert_str_eq (cap_text (&c), "[\n  \"p\",\n  -2.3849999999999998\n]\n");
  /* an empty document's only byte is the newline of bl_json_finish */
  cap_open (&c);
  ck_assert_str_eq (cap_text (&c), "\n");
  /* a top-level scalar, as the writer allows */
  cap_open (&c);
  bl_json_num (&c.w, NULL, 0.125);
  ck_assert_str_eq (cap_text (&c), "0.125\n");
  /* sizes are written whole (%zu), even past what a double holds exactly */
  cap_open (&c);
  bl_json_size (&c.w, NULL, SIZE_MAX);
  {
    char want[32];
    snprintf (want, sizeof want, "%zu\n", (size_t) SIZE_MAX);
    ck_assert_str_eq (cap_text (&c), want);
  }
}
END_TEST

START_TEST (json_keys_escaped_like_values)
{
  capture c;
  json_t *root;
  cap_open (&c);
  bl_json_obj (&c.w, NULL);
  bl_json_str (&c.w, "a\"b\\c\n", "v");
  bl_json_obj_end (&c.w);
  ck_assert_str_eq (cap_text (&c), "{\n  \"a\\\"b\\\\c\\n\": \"v\"\n}\n");
  root = parse (c.text);
  ck_assert_str_eq (json_string_value (json_object_get (root, "a\"b\\c\n")), "v");
  json_decref (root);
}
END_TEST

/* ---------------------------------------------------------------- numbers */

START_TEST (json_numbers_round_trip)
{
  /* high-entropy values, the extremes of double and a subnormal; each must read back to
     the same double from its %.17g text */
  const double x[] = { 2.385, -0.1, 1.0 / 3.0, 6.02214076e23, -7.331e-301, DBL_MAX,
                       -DBL_MAX, DBL_MIN, 4.9406564584124654e-324, DBL_EPSILON,
                       123456789012345678.0, 1e21, 9007199254740993.0 };
  const size_t n = sizeof x / sizeof x[0];
  capture c;
  json_t *root;
  char *line, *save = NULL;
  size_t k = 0;
  cap_open (&c);
  bl_json_arr (&c.w, NULL);
  for (size_t i = 0; i < n; i++)
    bl_json_num (&c.w, NULL, x[i]);
  bl_json_arr_end (&c.w);
  cap_text (&c);
  root = parse (c.text);
  ck_assert_uint_eq (json_array_size (root), n);
  for (size_t i = 0; i < n; i++) {
    const json_t *v = json_array_get (root, i);
    ck_assert_msg (json_is_number (v), "x[%zu] not a number", i);
    ck_assert_msg (json_number_value (v) == x[i], "x[%zu]: Jansson reads %.17g, wrote %.17g",
                   i, json_number_value (v), x[i]);
  }
  json_decref (root);
  /* the text of each element is exactly %.17g, and strtod reads it back bit for bit */
  for (line = strtok_r (c.text, "\n", &save); line; line = strtok_r (NULL, "\n", &save)) {
    char want[40], *end;
    const char *s = line;
    size_t len;
    double back;
    if (strcmp (line, "[") == 0 || strcmp (line, "]") == 0)
      continue;
    ck_assert_msg (k < n, "more elements than written");
    ck_assert_msg (strncmp (s, "  ", 2) == 0, "element %zu not indented: '%s'", k, line);
    s += 2;
    len = strlen (s);
    if (k + 1 < n) {
      ck_assert_msg (len > 0 && s[len - 1] == ',', "element %zu lacks its comma", k);
      len--;
    }
    snprintf (want, sizeof want, "%.17g", x[k]);
    ck_assert_msg (strlen (want) == len && strncmp (s, want, len) == 0,
                   "x[%zu]: wrote '%.*s', %%.17g is '%s'", k, (int) len, s, want);
    back = strtod (want, &end);
    ck_assert_msg (back == x[k] && signbit (back) == signbit (x[k]), "x[%zu] round trip", k);
    k++;
  }
  ck_assert_uint_eq (k, n);
}
END_TEST

START_TEST (json_negative_zero_and_nonfinite)
{
  capture c;
  cap_open (&c);
  bl_json_arr (&c.w, NULL);
  bl_json_num (&c.w, NULL, -0.0);
  bl_json_num (&c.w, NULL, 0.0);
  bl_json_num (&c.w, NULL, NAN);
  bl_json_num (&c.w, NULL, -NAN);
  bl_json_num (&c.w, NULL, HUGE_VAL);
  bl_json_num (&c.w, NULL, -HUGE_VAL);
  bl_json_arr_end (&c.w);
  ck_assert_str_eq (cap_text (&c),
                    "[\n  0,\n  0,\n  null,\n  null,\n  null,\n  null\n]\n");
  /* with a key as well */
  cap_open (&c);
  bl_json_obj (&c.w, NULL);
  bl_json_num (&c.w, "inf", INFINITY);
  bl_json_obj_end (&c.w);
  ck_assert_str_eq (cap_text (&c), "{\n  \"inf\": null\n}\n");
}
END_TEST

/* ---------------------------------------------------------------- escaping */

START_TEST (json_escape_quotes_backslashes)
{
  capture c;
  json_t *root;
  const char *s = "say \"hi\" \\ C:\\dir\\ / end";
  ck_assert_str_eq (string_doc (&c, s),
                    "{\n  \"s\": \"say \\\"hi\\\" \\\\ C:\\\\dir\\\\ / end\"\n}\n");
  root = parse (c.text);
  ck_assert_str_eq (json_string_value (json_object_get (root, "s")), s);
  json_decref (root);
  ck_assert_str_eq (string_doc (&c, ""), "{\n  \"s\": \"\"\n}\n");
}
END_TEST

START_TEST (json_escape_control_characters)
{
  /* every byte 0x01..0x1f: \n \r \t by name, the rest as \u00XX in lower-case hex (the
     writer's %04x); 0x7f (DEL) is not a control character for JSON and is copied */
  char in[40], want[400], body[300];
  size_t k = 0, b = 0;
  capture c;
  json_t *root;
  for (int ch = 1; ch < 0x20; ch++) {
    in[k++] = (char) ch;
    if (ch == '\n')
      b += (size_t) snprintf (body + b, sizeof body - b, "\\n");
    else if (ch == '\r')
      b += (size_t) snprintf (body + b, sizeof body - b, "\\r");
    else if (ch == '\t')
      b += (size_t) snprintf (body + b, sizeof body - b, "\\t");
    else
      b += (size_t) snprintf (body + b, sizeof body - b, "\\u00%c%c", "01"[ch >> 4],
                              "0123456789abcdef"[ch & 15]);
  }
  in[k++] = 0x7f;
  in[k] = '\0';
  snprintf (want, sizeof want, "{\n  \"s\": \"%s\x7f\"\n}\n", body);
  ck_assert_str_eq (string_doc (&c, in), want);
  ck_assert_ptr_nonnull (strstr (c.text, "\\u0008\\t\\n\\u000b\\u000c\\r\\u000e"));
  ck_assert_ptr_nonnull (strstr (c.text, "\\u001f\x7f"));
  root = parse (c.text);
  ck_assert_str_eq (json_string_value (json_object_get (root, "s")), in);
  json_decref (root);
}
END_TEST

START_TEST (json_utf8_copied_unchanged)
{
  /* 2-, 3- and 4-byte UTF-8 sequences are copied byte for byte, never as \u escapes */
  const char *s = "\xc3\xa9t\xc3\xa9 \xe2\x82\xac \xf0\x9d\x9c\x87 \xe6\xb0\xb4";
  char want[200];
  capture c;
  json_t *root;
  snprintf (want, sizeof want, "{\n  \"s\": \"%s\"\n}\n", s);
  ck_assert_str_eq (string_doc (&c, s), want);
  ck_assert_ptr_null (strstr (c.text, "\\u"));
  root = parse (c.text);
  ck_assert_str_eq (json_string_value (json_object_get (root, "s")), s);
  json_decref (root);
  /* the writer does not validate: a byte that is not UTF-8 is copied as it is (callers pass
     UTF-8; this documents what the writer does with anything else) */
  ck_assert_str_eq (string_doc (&c, "a\xff" "b"), "{\n  \"s\": \"a\xff" "b\"\n}\n");
}
END_TEST

/* ---------------------------------------------------------------- errors */

/* A writer on a stream opened for reading: every write fails at once. */
static FILE *
read_only_stream (char *path, size_t cap)
{
  char dir[512];
  FILE *f;
  test_tmpdir (dir, sizeof dir);
  snprintf (path, cap, "%s/ro.json", dir);
  test_write_file (path, "", 0);
  f = fopen (path, "r");
  ck_assert_msg (f != NULL, "cannot open %s", path);
  return f;
}

START_TEST (json_failed_write_reported)
{
  char path[600];
  FILE *f = read_only_stream (path, sizeof path);
  bl_json w;
  bl_json_init (&w, f);
  bl_json_obj (&w, NULL);
  ck_assert_int_ne (w.err, 0);              /* the first write already failed */
  bl_json_str (&w, "k", "\xc3\xa9");             /* the byte-copy path fails the same way */
  bl_json_num (&w, "x", 2.385);
  bl_json_obj_end (&w);
  ck_assert_int_ne (bl_json_finish (&w), 0);
  fclose (f);
  remove (path);
}
END_TEST

START_TEST (json_failed_write_is_sticky)
{
  /* one failed write, then the writer is moved to a good stream and the document is
     finished there: the later writes succeed, but cannot clear the failure */
  char path[600];
  FILE *bad = read_only_stream (path, sizeof path), *good = tmpfile ();
  bl_json w;
  ck_assert_ptr_nonnull (good);
  bl_json_init (&w, bad);
  bl_json_obj (&w, NULL);
  ck_assert_int_ne (w.err, 0);
  w.f = good;
  bl_json_str (&w, "k", "v");
  bl_json_num (&w, "x", 2.385);
  bl_json_obj_end (&w);
  ck_assert_int_ne (bl_json_finish (&w), 0);
  ck_assert_int_eq (ferror (good), 0);      /* the good stream took every later byte */
  ck_assert_int_gt (ftell (good), 0);
  fclose (good);
  fclose (bad);
  remove (path);
}
END_TEST

START_TEST (json_disk_full_reported)
{
  /* a write that fails as on a full disk (ENOSPC: an unbuffered stream on /dev/full, so
     that each write reaches the device).  Skipped where /dev/full does not exist; the
     read-only stream tests cover the same code on every system. */
  FILE *full = fopen ("/dev/full", "w");
  bl_json w;
  if (!full)
    return;
  ck_assert_int_eq (setvbuf (full, NULL, _IONBF, 0), 0);
  bl_json_init (&w, full);
  bl_json_arr (&w, NULL);
  bl_json_size (&w, NULL, 3);
  bl_json_arr_end (&w);
  ck_assert_int_ne (bl_json_finish (&w), 0);
  fclose (full);
}
END_TEST

START_TEST (json_depth_limit_reported)
{
  capture c;
  /* BL_JSON_MAX_DEPTH - 1 open levels are fine ... */
  cap_open (&c);
  for (int i = 0; i < BL_JSON_MAX_DEPTH - 1; i++)
    bl_json_arr (&c.w, NULL);
  for (int i = 0; i < BL_JSON_MAX_DEPTH - 1; i++)
    bl_json_arr_end (&c.w);
  cap_text (&c);
  json_decref (parse (c.text));
  /* ... one more is an error that bl_json_finish reports */
  cap_open (&c);
  for (int i = 0; i < BL_JSON_MAX_DEPTH; i++)
    bl_json_arr (&c.w, NULL);
  ck_assert_int_ne (c.w.err, 0);
  ck_assert_int_ne (bl_json_finish (&c.w), 0);
  fclose (c.f);
}
END_TEST

static Suite *
json_suite (void)
{
  Suite *s = suite_create ("json");
  TCase *bas = tcase_create ("basics");
  TCase *idt = tcase_create ("identities");
  TCase *esc = tcase_create ("escaping");
  TCase *err = tcase_create ("errors");
  tcase_add_test (bas, json_layout_nesting_commas);
  tcase_add_test (bas, json_top_level_array_and_scalars);
  tcase_add_test (bas, json_keys_escaped_like_values);
  tcase_add_test (idt, json_numbers_round_trip);
  tcase_add_test (idt, json_negative_zero_and_nonfinite);
  tcase_add_test (esc, json_escape_quotes_backslashes);
  tcase_add_test (esc, json_escape_control_characters);
  tcase_add_test (esc, json_utf8_copied_unchanged);
  tcase_add_test (err, json_failed_write_reported);
  tcase_add_test (err, json_failed_write_is_sticky);
  tcase_add_test (err, json_disk_full_reported);
  tcase_add_test (err, json_depth_limit_reported);
  suite_add_tcase (s, bas);
  suite_add_tcase (s, idt);
  suite_add_tcase (s, esc);
  suite_add_tcase (s, err);
  return s;
}

int
main (void)
{
  SRunner *sr = srunner_create (json_suite ());
  int nf;
  srunner_run_all (sr, CK_NORMAL);
  nf = srunner_ntests_failed (sr);
  srunner_free (sr);
  return nf == 0 ? EXIT_SUCCESS : EXIT_FAILURE;
}
