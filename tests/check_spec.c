/* check_spec.c -- the batch spec-file parser: good specs and their values, defaults and
   inheritance, path resolution, every error with its NAME:LINE and message, allocation
   failures.  The format is ballast's own (src/lib/spec.h, doc/spec-format.md); the expected
   values and messages come from that interface and from job.h, not from another program.
   UTF-8 well-formedness follows the Unicode Standard, table 3-7 ("Well-Formed UTF-8 Byte
   Sequences"). */
#include <check.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>
#include "alloc.h"
#include "job.h"
#include "testutil.h"

#ifndef BL_TEST_SRCDIR
#define BL_TEST_SRCDIR "."
#endif

/* Parse TEXT as "mem.spec" with folder DIR and require success; the message names CASE. */
static bl_spec *
spec_ok (const char *cas, const char *text, const char *dir)
{
  bl_err err = { 0 };
  bl_spec *s = bl_spec_read_mem (text, strlen (text), "mem.spec", dir, &err);
  ck_assert_msg (s != NULL, "%s: %s: %s", cas, err.where, err.msg);
  return s;
}

/* Parse TEXT (LEN bytes) and require BL_ESPEC at WHERE with FRAG in the message. */
static void
spec_fails_len (const char *cas, const char *text, size_t len, const char *where,
                const char *frag)
{
  bl_err err = { 0 };
  bl_spec *s = bl_spec_read_mem (text, len, "mem.spec", "/srv/specs", &err);
  ck_assert_msg (s == NULL, "%s: should fail", cas);
  ck_assert_msg (err.code == BL_ESPEC, "%s: code %d (%s: %s)", cas, err.code, err.where,
                 err.msg);
  ck_assert_msg (strcmp (err.where, where) == 0, "%s: where '%s', expected '%s' (%s)", cas,
                 err.where, where, err.msg);
  ck_assert_msg (strstr (err.msg, frag) != NULL, "%s: message '%s' lacks '%s'", cas, err.msg,
                 frag);
}

static void
spec_fails (const char *cas, const char *text, const char *where, const char *frag)
{
  spec_fails_len (cas, text, strlen (text), where, frag);
}

static const bl_spec_job *
job_at (const bl_spec *s, size_t i)
{
  const bl_spec_job *j = bl_spec_get (s, i);
  ck_assert_msg (j != NULL, "job %zu missing (njobs %zu)", i, bl_spec_njobs (s));
  return j;
}

/* ------------------------------------------------------------------ basics */

/* A spec with comments, blank lines, white space, quotes and inline comments; every value
   lands where job.h says (common practice, no source: the values are the spec's own). */
START_TEST (spec_basics_good_values)
{
  static const char text[] =
    "# a comment line\n"                                     /* 1 */
    "\n"                                                     /* 2 */
    "[defaults]\n"                                           /* 3 */
    "  data   =   pumps.csv.gz    # inline comment\n"        /* 4 */
    "folds=5\n"                                              /* 5 */
    "   # an indented comment\n"                             /* 6 */
    "[job repair-hours]\n"                                   /* 7 */
    "response = repair_hours\n"                              /* 8 */
    "terms = \"age_years, load_pct, site\"   # quoted\n"     /* 9 */
    "seed = 7345\n"                                          /* 10 */
    "\t[job Gamma_2.b]\t\n"                                  /* 11 */
    "response = repair_hours\n"                              /* 12 */
    "family = gamma\n"                                       /* 13 */
    "link = log\n"                                           /* 14 */
    "no-intercept = yes\n"                                   /* 15 */
    "level = 0.9\n"                                          /* 16 */
    "categorical = site , duty\n"                            /* 17 */
    "[job stops]  # a header comment\n"                      /* 18 */
    "data = /abs/stops.csv.gz\n"                             /* 19 */
    "response = unplanned_stops\n"                           /* 20 */
    "offset = log(operating_hours)\n"                        /* 21 */
    "candidates = poi-log, gau-log\n";                       /* 22 */
  bl_spec *s = spec_ok ("good", text, "/srv/specs");
  const bl_spec_job *a, *b, *c;
  ck_assert_msg (bl_spec_njobs (s) == 3, "good: njobs %zu", bl_spec_njobs (s));
  a = job_at (s, 0);
  b = job_at (s, 1);
  c = job_at (s, 2);
  ck_assert_msg (bl_spec_get (s, 3) == NULL, "good: job 3 should be NULL");
  ck_assert_str_eq (a->name, "repair-hours");
  ck_assert_str_eq (b->name, "Gamma_2.b");
  ck_assert_str_eq (c->name, "stops");
  ck_assert_msg (a->line == 7 && b->line == 11 && c->line == 18, "good: lines %zu %zu %zu",
                 a->line, b->line, c->line);
  ck_assert_msg (a->single == 0 && b->single == 1 && c->single == 0, "good: single %d %d %d",
                 a->single, b->single, c->single);
  ck_assert_str_eq (a->job.data, "/srv/specs/pumps.csv.gz");
  ck_assert_str_eq (a->job.response, "repair_hours");
  ck_assert_str_eq (a->job.terms, "age_years, load_pct, site");
  ck_assert_msg (a->job.folds == 5 && a->job.seed == 7345 && a->job.seed_given,
                 "good: folds %zu seed %lu", a->job.folds, a->job.seed);
  ck_assert_msg (a->job.intercept == 1, "good: a intercept");
  ck_assert_msg (b->job.fit.fam == &bl_family_gamma, "good: b family");
  ck_assert_msg (b->job.fit.link == bl_link_find ("log"), "good: b link");
  ck_assert_msg (b->job.intercept == 0, "good: b no-intercept");
  ck_assert_msg (b->job.fit.level == 0.9, "good: b level %g", b->job.fit.level);
  ck_assert_msg (b->job.ncat == 2, "good: b ncat %zu", b->job.ncat);
  ck_assert_str_eq (b->job.categorical[0], "site");
  ck_assert_str_eq (b->job.categorical[1], "duty");
  ck_assert_msg (b->job.terms == NULL, "good: b terms should be unset");
  ck_assert_str_eq (c->job.data, "/abs/stops.csv.gz");
  ck_assert_str_eq (c->job.offset, "log(operating_hours)");
  ck_assert_str_eq (c->job.candidates, "poi-log, gau-log");
  ck_assert_msg (c->job.folds == 5 && !c->job.seed_given, "good: c folds/seed");
  ck_assert_str_eq (bl_spec_stem (s), "mem");
  bl_spec_free (s);
}
END_TEST

/* Quoted values keep '#'; a bare '#' not after white space is part of the value; white
   space around '=' and around values is trimmed; '=' inside a value stays. */
START_TEST (spec_basics_quotes_and_comments)
{
  static const char text[] =
    "[job q]\n"
    "data = \"a #1.csv\"   # the file name has a '#'\n"
    "response = y#2\n"
    "weights = \"  w  \"\n"
    "reference = \"site=north-quay\" #\n"
    "offset=#\n";
  bl_err err = { 0 };
  bl_spec *s = bl_spec_read_mem (text, strlen (text), "q.spec", NULL, &err);
  /* offset=# is an empty value: the '#' at its start begins a comment */
  ck_assert_msg (s == NULL && err.code == BL_ESPEC, "quotes: empty offset accepted");
  ck_assert_str_eq (err.where, "q.spec:6");
  ck_assert_msg (strstr (err.msg, "'offset' needs a value"), "quotes: msg '%s'", err.msg);
  s = bl_spec_read_mem (text, strlen (text) - strlen ("offset=#\n"), "q.spec", NULL, &err);
  ck_assert_msg (s != NULL, "quotes: %s: %s", err.where, err.msg);
  ck_assert_str_eq (job_at (s, 0)->job.data, "a #1.csv");
  ck_assert_str_eq (job_at (s, 0)->job.response, "y#2");
  ck_assert_str_eq (job_at (s, 0)->job.weights, "  w  ");
  ck_assert_msg (job_at (s, 0)->job.nref == 1, "quotes: nref");
  ck_assert_str_eq (job_at (s, 0)->job.reference[0], "site=north-quay");
  bl_spec_free (s);
  /* the bare value ends at " #": "[x" is then a term syntax error, so terms were cut */
  spec_fails ("bare # cuts terms", "[job q]\ndata=d\nresponse=y\nterms = [x #3]\n",
              "mem.spec:4", "expected ']'");
  s = spec_ok ("quoted # kept in terms", "[job q]\ndata=d\nresponse=y\nterms = \"[x #3]\"\n",
               NULL);
  ck_assert_str_eq (job_at (s, 0)->job.terms, "[x #3]");
  bl_spec_free (s);
}
END_TEST

/* CRLF line ends and a UTF-8 byte order mark; UTF-8 text in a value is accepted. */
START_TEST (spec_basics_crlf_bom_utf8)
{
  static const char text[] =
    "\xef\xbb\xbf[defaults]\r\n"
    "data = caf\xc3\xa9 \xe2\x82\xac.csv\r\n"       /* café €.csv */
    "\r\n"
    "[job a]\r\n"
    "response = y\r\n"
    "terms = \"[\xf0\x9f\x94\xa7 count]\"\r\n";     /* U+1F527, four bytes */
  bl_spec *s = spec_ok ("crlf+bom", text, "");
  const bl_spec_job *a = job_at (s, 0);
  ck_assert_str_eq (a->name, "a");
  ck_assert_msg (a->line == 4, "crlf: line %zu", a->line);
  ck_assert_str_eq (a->job.data, "caf\xc3\xa9 \xe2\x82\xac.csv");
  ck_assert_str_eq (a->job.response, "y");
  bl_spec_free (s);
  /* A BOM anywhere but the start is not skipped: U+FEFF inside a name is a bad byte. */
  spec_fails ("bom later", "[job a]\ndata=d\nresponse=y\n[job \xef\xbb\xbf" "b]\n",
              "mem.spec:4", "byte 0xef");
}
END_TEST

/* Defaults: copied into each job; a job's keys replace them, categorical replaces, reference
   accumulates; single-model keys in [defaults] make every job a single model. */
/* A combination the job's run would refuse is refused when the spec is read, at the line
   that makes it: a second reference level for a column (the defaults' and the job's), the
   smaller model's syntax (its line) and its nesting (the job's line), and a comparison with
   keys that change only a coefficient table.  (issue 14) */
START_TEST (spec_errors_whole_job)
{
  static const struct { const char *text, *where, *msg; } cases[] = {
    { "[defaults]\ndata = d.csv\nreference = site=north\n[job a]\nresponse = y\n"
      "reference = site=south\n", "mem.spec:6",
      "two reference levels for one column: 'site=north' and 'site=south'" },
    { "[defaults]\nagainst = x1,(\n[job a]\ndata = d.csv\nresponse = y\nterms = x1, x2\n",
      "mem.spec:2", NULL },
    { "[job a]\ndata = d.csv\nresponse = y\nterms = x1\nagainst = x2\n", "mem.spec:1",
      "the smaller model is not nested in the larger: its term 'x2' is not one of --terms" },
    { "[defaults]\nlevel = 0.9\n[job a]\ndata = d.csv\nresponse = y\n", "mem.spec:3",
      "a comparison reports no coefficients: 'level' applies to one model" },
    { "[job a]\ndata = d.csv\nresponse = y\ncandidates = ls\nse = hc1\n", "mem.spec:1",
      "a comparison reports no coefficients: 'se' applies to one model" }
  };
  for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
    bl_err err = { 0 };
    bl_spec *sp = bl_spec_read_mem (cases[i].text, strlen (cases[i].text), "mem.spec", NULL,
                                    &err);
    ck_assert_msg (sp == NULL && err.code == BL_ESPEC, "case %zu: accepted", i);
    ck_assert_msg (strcmp (err.where, cases[i].where) == 0, "case %zu: where '%s'", i,
                   err.where);
    ck_assert_msg (!cases[i].msg || strcmp (err.msg, cases[i].msg) == 0, "case %zu: '%s'", i,
                   err.msg);
  }
}
END_TEST

START_TEST (spec_basics_defaults_inheritance)
{
  static const char text[] =
    "[defaults]\n"
    "data = pumps.csv.gz\n"
    "response = repair_hours\n"
    "categorical = site\n"
    "reference = site=north-quay\n"
    "folds = 4\n"
    "[job inherit]\n"
    "[job override]\n"
    "data = other.csv\n"
    "response = parts_cost\n"
    "categorical = duty, site\n"
    "reference = duty=light, zone=east\n"
    "folds = 0\n";
  bl_spec *s = spec_ok ("defaults", text, "spec-dir");
  const bl_spec_job *a = job_at (s, 0), *b = job_at (s, 1);
  ck_assert_str_eq (a->job.data, "spec-dir/pumps.csv.gz");
  ck_assert_str_eq (a->job.response, "repair_hours");
  ck_assert_msg (a->job.ncat == 1 && a->job.nref == 1 && a->job.folds == 4,
                 "defaults: inherit ncat %zu nref %zu folds %zu", a->job.ncat, a->job.nref,
                 a->job.folds);
  ck_assert_str_eq (a->job.reference[0], "site=north-quay");
  ck_assert_str_eq (b->job.data, "spec-dir/other.csv");
  ck_assert_str_eq (b->job.response, "parts_cost");
  ck_assert_msg (b->job.ncat == 2, "defaults: override ncat %zu", b->job.ncat);
  ck_assert_str_eq (b->job.categorical[0], "duty");
  ck_assert_msg (b->job.nref == 3, "defaults: override nref %zu", b->job.nref);
  ck_assert_str_eq (b->job.reference[0], "site=north-quay");
  ck_assert_str_eq (b->job.reference[1], "duty=light");
  ck_assert_str_eq (b->job.reference[2], "zone=east");
  ck_assert_msg (b->job.folds == 0, "defaults: override folds %zu", b->job.folds);
  ck_assert_msg (a->single == 0 && b->single == 0, "defaults: single");
  bl_spec_free (s);

  s = spec_ok ("defaults single", "[defaults]\nfamily = poisson\ndata=d\nresponse=y\n"
               "[job p1]\n[job p2]\nlink = identity\n", NULL);
  ck_assert_msg (job_at (s, 0)->single == 1 && job_at (s, 1)->single == 1,
                 "defaults single: flags");
  ck_assert_msg (job_at (s, 1)->job.fit.fam == &bl_family_poisson, "defaults single: fam");
  ck_assert_msg (job_at (s, 1)->job.fit.link == bl_link_find ("identity"),
                 "defaults single: link");
  bl_spec_free (s);
}
END_TEST

/* Relative data paths join DIR (with or without its trailing '/'); absolute ones stay; an
   empty or NULL DIR keeps them as written.  bl_spec_read uses the folder of PATH. */
START_TEST (spec_basics_paths)
{
  static const struct { const char *dir, *data, *want; } c[] = {
    { "/srv/specs", "x.csv", "/srv/specs/x.csv" },
    { "/srv/specs/", "x.csv", "/srv/specs/x.csv" },
    { "rel", "sub/x.csv", "rel/sub/x.csv" },
    { "/srv/specs", "../x.csv", "/srv/specs/../x.csv" },
    { "/srv/specs", "/data/x.csv", "/data/x.csv" },
    { "", "x.csv", "x.csv" },
    { NULL, "x.csv", "x.csv" },
  };
  char tmp[512], path[600], want[700], text[200];
  bl_err err = { 0 };
  bl_spec *s;
  FILE *f;
  for (size_t i = 0; i < sizeof c / sizeof c[0]; i++) {
    char cas[32];
    snprintf (text, sizeof text, "[job p]\ndata = %s\nresponse = y\n", c[i].data);
    snprintf (cas, sizeof cas, "paths c[%zu]", i);
    s = spec_ok (cas, text, c[i].dir);
    ck_assert_msg (strcmp (job_at (s, 0)->job.data, c[i].want) == 0, "%s: '%s' != '%s'", cas,
                   job_at (s, 0)->job.data, c[i].want);
    bl_spec_free (s);
  }
  /* From a file: the folder of PATH, and the stem of its name. */
  test_tmpdir (tmp, sizeof tmp);
  snprintf (path, sizeof path, "%s/fleet.2026.spec", tmp);
  f = fopen (path, "w");
  ck_assert_ptr_nonnull (f);
  fputs ("[job a]\ndata = pumps.csv.gz\nresponse = y\n[job b]\ndata=/x.csv\nresponse=y\n", f);
  ck_assert_int_eq (fclose (f), 0);
  s = bl_spec_read (path, &err);
  ck_assert_msg (s != NULL, "paths file: %s: %s", err.where, err.msg);
  snprintf (want, sizeof want, "%s/pumps.csv.gz", tmp);
  ck_assert_str_eq (job_at (s, 0)->job.data, want);
  ck_assert_str_eq (job_at (s, 1)->job.data, "/x.csv");
  ck_assert_str_eq (bl_spec_stem (s), "fleet.2026");
  bl_spec_free (s);
  /* An error in a file names the path as given. */
  f = fopen (path, "w");
  ck_assert_ptr_nonnull (f);
  fputs ("[job a]\ndata = pumps.csv.gz\nresponse = y\nlink = logit\n", f);
  ck_assert_int_eq (fclose (f), 0);
  ck_assert_ptr_null (bl_spec_read (path, &err));
  snprintf (want, sizeof want, "%s:4", path);
  ck_assert_int_eq (err.code, BL_ESPEC);
  ck_assert_str_eq (err.where, want);
  ck_assert_msg (strstr (err.msg, "unknown link 'logit'"), "paths file: msg '%s'", err.msg);
  unlink (path);
  rmdir (tmp);
}
END_TEST

/* The shipped demo batch parses: four jobs, its data found next to it. */
START_TEST (spec_basics_demo_file)
{
  const char *top = getenv ("top_srcdir");
  char path[1024], want[1100];
  bl_err err = { 0 };
  bl_spec *s;
  const bl_spec_job *j;
  snprintf (path, sizeof path, "%s/data/demo.spec", top ? top : BL_TEST_SRCDIR);
  s = bl_spec_read (path, &err);
  ck_assert_msg (s != NULL, "demo: %s: %s", err.where, err.msg);
  ck_assert_str_eq (bl_spec_stem (s), "demo");
  ck_assert_msg (bl_spec_njobs (s) == 4, "demo: njobs %zu", bl_spec_njobs (s));
  snprintf (want, sizeof want, "%s/data/pumps.csv.gz", top ? top : BL_TEST_SRCDIR);
  for (size_t i = 0; i < 4; i++) {
    j = job_at (s, i);
    ck_assert_msg (access (j->job.data, R_OK) == 0, "demo job %zu: cannot read '%s'", i,
                   j->job.data);
    ck_assert_msg (j->job.folds == 10, "demo job %zu: folds %zu", i, j->job.folds);
  }
  ck_assert_str_eq (job_at (s, 0)->job.data, want);
  j = job_at (s, 1);
  ck_assert_msg (j->job.nref == 2, "demo parts-cost: nref %zu", j->job.nref);
  j = job_at (s, 2);
  ck_assert_str_eq (j->job.offset, "log(operating_hours)");
  ck_assert_msg (j->single == 0, "demo stops: single");
  j = job_at (s, 3);
  ck_assert_msg (j->single == 1 && j->job.fit.fam == &bl_family_gamma
                 && j->job.fit.link == bl_link_find ("log"), "demo repair-gamma: model");
  bl_spec_free (s);
}
END_TEST

/* Stems: no folder, no last extension; a leading '.' is part of the name. */
START_TEST (spec_basics_stem)
{
  static const struct { const char *name, *stem; } c[] = {
    { "data/demo.spec", "demo" }, { "demo.spec", "demo" }, { "a/b.c/fleet.v2.spec", "fleet.v2" },
    { "noext", "noext" }, { "dir.d/plain", "plain" }, { ".hidden", ".hidden" },
    { "/x/.hidden.spec", ".hidden" },
  };
  for (size_t i = 0; i < sizeof c / sizeof c[0]; i++) {
    static const char text[] = "[job a]\ndata=d\nresponse=y\n";
    bl_err err = { 0 };
    bl_spec *s = bl_spec_read_mem (text, strlen (text), c[i].name, NULL, &err);
    ck_assert_msg (s != NULL, "stem c[%zu]: %s", i, err.msg);
    ck_assert_msg (strcmp (bl_spec_stem (s), c[i].stem) == 0, "stem c[%zu]: '%s' != '%s'", i,
                   bl_spec_stem (s), c[i].stem);
    bl_spec_free (s);
  }
}
END_TEST

/* Name rules of spec.h, one by one. */
START_TEST (spec_basics_name_rules)
{
  char n64[66], n65[67];
  static const char *const good[] = {
    "a", "A", "7", "site-7", "Gamma_2.b", "a..b", "x.", "x-", "_x", "summary2", "indexes",
    "my.summary"
  };
  static const char *const bad[] = {
    "", ".", "..", ".x", "-x", "a/b", "/a", "a b", "a\tb", "a\x01", "caf\xc3\xa9", "a\\b",
    "a:b", "summary", "SUMMARY", "Summary", "index", "InDeX", "a*", "a]"
  };
  memset (n64, 'n', 64);
  n64[64] = '\0';
  memset (n65, 'n', 65);
  n65[65] = '\0';
  for (size_t i = 0; i < sizeof good / sizeof good[0]; i++)
    ck_assert_msg (bl_spec_name_ok (good[i]), "name good[%zu] '%s' refused", i, good[i]);
  for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++)
    ck_assert_msg (!bl_spec_name_ok (bad[i]), "name bad[%zu] '%s' accepted", i, bad[i]);
  ck_assert_msg (bl_spec_name_ok (n64), "name: 64 bytes refused");
  ck_assert_msg (!bl_spec_name_ok (n65), "name: 65 bytes accepted");
  ck_assert_msg (!bl_spec_name_ok (NULL), "name: NULL accepted");
}
END_TEST

/* A line of exactly BL_SPEC_MAX_LINE bytes is read (also with CRLF); one more is an error. */
START_TEST (spec_basics_line_limit)
{
  const size_t n = BL_SPEC_MAX_LINE;
  char *text = malloc (n + 100);
  const char *const tail = "\n[job a]\ndata=d\nresponse=y\n";
  bl_spec *s;
  ck_assert_ptr_nonnull (text);
  text[0] = '#';
  memset (text + 1, 'c', n - 1);
  strcpy (text + n, tail);
  s = spec_ok ("line limit exact", text, NULL);
  bl_spec_free (s);
  text[n] = '\r';
  strcpy (text + n + 1, tail);
  s = spec_ok ("line limit exact crlf", text, NULL);
  bl_spec_free (s);
  text[n] = 'c';
  strcpy (text + n + 1, tail);
  spec_fails ("line limit + 1", text, "mem.spec:1", "line is 65537 bytes long");
  free (text);
}
END_TEST

/* BL_SPEC_MAX_JOBS jobs are read; one more is an error at its header. */
START_TEST (spec_basics_job_limit)
{
  const size_t per = 16;              /* "[job j12345]\n" fits */
  char *text = malloc ((BL_SPEC_MAX_JOBS + 2) * per + 64), *p = text;
  bl_spec *s;
  ck_assert_ptr_nonnull (text);
  p += sprintf (p, "[defaults]\ndata=d\nresponse=y\n");
  for (int i = 0; i < BL_SPEC_MAX_JOBS; i++)
    p += sprintf (p, "[job j%d]\n", i);
  s = spec_ok ("job limit exact", text, NULL);
  ck_assert_msg (bl_spec_njobs (s) == BL_SPEC_MAX_JOBS, "job limit: njobs %zu",
                 bl_spec_njobs (s));
  ck_assert_str_eq (job_at (s, BL_SPEC_MAX_JOBS - 1)->name, "j9999");
  bl_spec_free (s);
  sprintf (p, "[job last]\n");
  spec_fails ("job limit + 1", text, "mem.spec:10004", "more than 10000 jobs");
  free (text);
}
END_TEST

/* ------------------------------------------------------------------ errors */

/* Each error class, with the line it names and a fragment of its message. */
START_TEST (spec_errors_each_class)
{
  static const struct { const char *cas, *text, *where, *frag; } c[] = {
    { "unknown key", "[job a]\ncolour = red\n", "mem.spec:2", "unknown key 'colour'" },
    { "upper-case key", "[job a]\nFamily = gamma\n", "mem.spec:2",
      "unknown key 'Family' (keys are lower case: 'family')" },
    { "key twice", "[job a]\ndata = d\nresponse = y\ndata = e\n", "mem.spec:4",
      "key 'data' given twice in this section (first at line 2)" },
    { "reference twice", "[job a]\ndata=d\nresponse=y\nreference=a=b\nreference=c=d\n",
      "mem.spec:5", "key 'reference' given twice" },
    { "key outside", "# top\ndata = d\n[job a]\n", "mem.spec:2",
      "key 'data' outside any section" },
    { "no '='", "[job a]\ndata d\n", "mem.spec:2", "expected 'key = value'" },
    { "no key", "[job a]\n = d\n", "mem.spec:2", "expected a key before '='" },
    { "no ']'", "[job a\n", "mem.spec:1", "expected ']'" },
    { "after header", "[job a] b\n", "mem.spec:1", "unexpected text after the section header" },
    { "after header #", "[job a]# b\n", "mem.spec:1", "unexpected text after the section" },
    { "unknown section", "[Defaults]\n", "mem.spec:1", "unknown section '[Defaults]'" },
    { "jobs section", "[jobs a]\n", "mem.spec:1", "unknown section '[jobs a]'" },
    { "job no name", "[job]\n", "mem.spec:1", "[job] needs a name" },
    { "job blank name", "[job   ]\n", "mem.spec:1", "[job] needs a name" },
    { "defaults twice", "[defaults]\n[defaults]\n", "mem.spec:2",
      "[defaults] given twice (first at line 1)" },
    { "defaults late", "[job a]\ndata=d\nresponse=y\n[defaults]\n", "mem.spec:4",
      "[defaults] must come before the first job (line 1)" },
    { "duplicate job", "[defaults]\ndata=d\nresponse=y\n[job a]\n[job b]\n[job a]\n",
      "mem.spec:6", "job 'a' given twice (first at line 4)" },
    { "case clash", "[defaults]\ndata=d\nresponse=y\n[job Site-A]\n[job site-a]\n",
      "mem.spec:5", "job 'site-a' differs from job 'Site-A' (line 4) only in case" },
    { "name slash", "[job a/b]\n", "mem.spec:1", "has the character '/'" },
    { "name dotdot", "[job ..]\n", "mem.spec:1", "starts with '.'" },
    { "name dot", "[job .a]\n", "mem.spec:1", "starts with '.'" },
    { "name dash", "[job -a]\n", "mem.spec:1", "starts with '-'" },
    { "name space", "[job a b]\n", "mem.spec:1", "has the character ' '" },
    { "name tab", "[job a\tb]\n", "mem.spec:1", "has the byte 0x09" },
    { "name utf8", "[job caf\xc3\xa9]\n", "mem.spec:1", "has the byte 0xc3" },
    { "name summary", "[job summary]\n", "mem.spec:1", "reserved for the batch report" },
    { "name Index", "[job Index]\n", "mem.spec:1", "'Index' is reserved" },
    { "name 65", "[job nnnnnnnnnnnnnnnnnnnnnnnnnnnnnnnnnnnnnnnnnnnnnnnnnnnnnnnnnnnnnnnnn]\n",
      "mem.spec:1", "is 65 bytes long (at most 64)" },
    { "control char", "[job a]\ndata = d\x01x\n", "mem.spec:2",
      "control character 0x01 at column 9" },
    { "stray CR", "[job a]\ndata = d\rx\n", "mem.spec:2", "control character 0x0d" },
    { "DEL", "[job a\x7f]\n", "mem.spec:1", "control character 0x7f at column 7" },
    { "latin-1", "[job a]\ndata = caf\xe9.csv\n", "mem.spec:2",
      "not valid UTF-8: byte 0xe9 at column 11" },
    { "overlong", "[job a]\nresponse = \xc0\xaf\n", "mem.spec:2", "byte 0xc0 at column 12" },
    { "overlong 3", "[job a]\nresponse = \xe0\x80\xaf\n", "mem.spec:2",
      "byte 0xe0 at column 12" },
    { "surrogate", "\n[job a]\nresponse = \xed\xa0\x80\n", "mem.spec:3",
      "byte 0xed at column 12" },
    { "above U+10FFFF", "[job a]\nresponse = \xf4\x90\x80\x80\n", "mem.spec:2",
      "byte 0xf4 at column 12" },
    { "bad lead", "[job a]\nresponse = \xf8\x88\x80\x80\x80\n", "mem.spec:2",
      "byte 0xf8 at column 12" },
    { "cut short", "[job a]\nresponse = y\xe2\x82\n", "mem.spec:2",
      "byte 0xe2 at column 13" },
    { "lone continuation", "[job a]\nresponse = \x80\n", "mem.spec:2", "byte 0x80" },
    { "no closing quote", "[job a]\nterms = \"a, b\n", "mem.spec:2",
      "value of 'terms' has no closing '\"'" },
    { "after quote", "[job a]\nterms = \"a, b\" c\n", "mem.spec:2",
      "unexpected text after the closing '\"' of 'terms': 'c'" },
    { "after quote #", "[job a]\nterms = \"a, b\"#c\n", "mem.spec:2",
      "unexpected text after the closing" },
    { "empty value", "[job a]\ndata =\n", "mem.spec:2", "'data' needs a value" },
    { "empty flag", "[job a]\nno-intercept = \n", "mem.spec:2", "expected yes or no, got ''" },
    { "bad family", "[job a]\ndata=d\nresponse=y\nfamily = poison\n", "mem.spec:4",
      "unknown family 'poison'" },
    { "bad folds", "[defaults]\nfolds = 1\n", "mem.spec:2", "expected 0 or an integer >= 2" },
    { "bad level", "[job a]\nlevel = 1.5\n", "mem.spec:2", "between 0 and 1, got '1.5'" },
    { "bad reference", "[job a]\nreference = site\n", "mem.spec:2", "expected COL=LEVEL" },
    { "bad candidates", "[job a]\ncandidates = ls, nope\n", "mem.spec:2",
      "unknown candidate 'nope'" },
    { "no data", "[job a]\nresponse = y\n[job b]\n", "mem.spec:1", "job 'a' has no data" },
    { "no response", "[job a]\ndata = d\n", "mem.spec:1", "job 'a' has no response" },
    { "no data, defaults", "[defaults]\nresponse=y\n\n[job x]\n", "mem.spec:4",
      "job 'x' has no data" },
    { "candidates and model", "[job a]\ndata=d\nresponse=y\ncandidates=ls\nfamily=gamma\n",
      "mem.spec:1", "give either candidates" },
    { "candidates, model in defaults", "[defaults]\nlink=log\n[job a]\ndata=d\nresponse=y\n"
      "candidates=ls\n", "mem.spec:3", "not both" },
    { "wls without weights", "[job a]\ndata=d\nresponse=y\nmethod=wls\n", "mem.spec:1",
      "wls needs --weights" },
    { "terms syntax", "[job a]\ndata=d\nresponse=y\nterms = age(\n", "mem.spec:4",
      "at character 1: unknown function 'age'" },
    { "terms in defaults", "[defaults]\nterms = log(x\n[job a]\ndata=d\nresponse=y\n",
      "mem.spec:2", "at character" },
    { "job terms over defaults", "[defaults]\nterms = log(x\n[job a]\ndata=d\nresponse=y\n"
      "terms = ok, log(\n", "mem.spec:6", "at character" },
    { "offset two terms", "[job a]\ndata=d\nterms=x\noffset = a, b\nresponse=y\n",
      "mem.spec:4", "expected one term, got 2" },
    { "offset syntax", "[defaults]\noffset = log(\n\n[job a]\ndata=d\nresponse=y\n",
      "mem.spec:2", "at character" },
    { "empty spec", "", "mem.spec:1", "no [job NAME] section" },
    { "comments only", "# a\n# b\n", "mem.spec:2", "no [job NAME] section" },
    { "defaults only", "[defaults]\ndata = d\nresponse = y\n", "mem.spec:3",
      "no [job NAME] section" },
    { "bom only", "\xef\xbb\xbf", "mem.spec:1", "no [job NAME] section" },
  };
  for (size_t i = 0; i < sizeof c / sizeof c[0]; i++)
    spec_fails (c[i].cas, c[i].text, c[i].where, c[i].frag);
}
END_TEST

/* A NUL byte inside the text (read_mem takes a length) is a control character. */
START_TEST (spec_errors_nul_byte)
{
  static const char text[] = "[job a]\ndata = d\0x\nresponse=y\n";
  spec_fails_len ("nul", text, sizeof text - 1, "mem.spec:2", "control character 0x00");
}
END_TEST

/* The first error wins, and nothing is returned: a later job's error is not reached. */
START_TEST (spec_errors_first_wins_and_null_err)
{
  static const char text[] = "[job a]\ndata=d\nfamily=x\n[job a]\n";
  bl_err err = { 0 };
  ck_assert_ptr_null (bl_spec_read_mem (text, strlen (text), "mem.spec", NULL, &err));
  ck_assert_str_eq (err.where, "mem.spec:3");
  /* A NULL error record is allowed. */
  ck_assert_ptr_null (bl_spec_read_mem (text, strlen (text), "mem.spec", NULL, NULL));
  /* NULL text with a length is refused; NULL text of length 0 is an empty spec. */
  ck_assert_ptr_null (bl_spec_read_mem (NULL, 5, "mem.spec", NULL, &err));
  ck_assert_int_eq (err.code, BL_ESPEC);
  ck_assert_ptr_null (bl_spec_read_mem (NULL, 0, "mem.spec", NULL, &err));
  ck_assert_msg (strstr (err.msg, "no [job NAME] section"), "null text: '%s'", err.msg);
  /* NULL name: messages say "spec". */
  ck_assert_ptr_null (bl_spec_read_mem ("[job]\n", 6, NULL, NULL, &err));
  ck_assert_str_eq (err.where, "spec:1");
  /* Accessors accept NULL. */
  ck_assert_msg (bl_spec_njobs (NULL) == 0 && bl_spec_get (NULL, 0) == NULL
                 && bl_spec_stem (NULL) == NULL, "null accessors");
  bl_spec_free (NULL);
}
END_TEST

/* A file that cannot be read is BL_EIO naming the path (bl_source's message). */
START_TEST (spec_errors_unreadable_file)
{
  char tmp[512], path[600];
  bl_err err = { 0 };
  test_tmpdir (tmp, sizeof tmp);
  snprintf (path, sizeof path, "%s/missing.spec", tmp);
  ck_assert_ptr_null (bl_spec_read (path, &err));
  ck_assert_int_eq (err.code, BL_EIO);
  ck_assert_str_eq (err.where, path);
  ck_assert_msg (strstr (err.msg, "cannot open"), "missing file: '%s'", err.msg);
  ck_assert_ptr_null (bl_spec_read (tmp, &err));
  ck_assert_int_eq (err.code, BL_EIO);
  ck_assert_msg (strstr (err.msg, "directory"), "directory: '%s'", err.msg);
  ck_assert_ptr_null (bl_spec_read (NULL, &err));
  ck_assert_int_eq (err.code, BL_EIO);
  rmdir (tmp);
}
END_TEST

/* The N-th allocation fails for N = 1, 2, ... until the read succeeds: each failure is
   NULL + BL_ENOMEM, and ASan's leak check at exit finds nothing (SQLite's malloc tests). */
START_TEST (spec_errors_alloc_failure)
{
  static const char text[] =
    "[defaults]\ndata = pumps.csv.gz\ncategorical = site, duty\nreference = site=north-quay\n"
    "terms = age_years, log(load_pct)\nvariance = [age_years]^est\n"
    "[job a]\nresponse = repair_hours\nreference = duty=light\n"
    "[job b]\nresponse = parts_cost\nfamily = gamma\noffset = log(hours_since_service)\n"
    "terms = cross(site, age_years)\nvariance = fitted^2\n";
  const size_t len = strlen (text);
  char tmp[512], path[600];
  unsigned long n;
  bl_spec *s;
  FILE *f;
  bl_alloc_fail_at (0);
  s = bl_spec_read_mem (text, len, "mem.spec", "/srv", NULL);
  ck_assert_ptr_nonnull (s);
  bl_spec_free (s);
  if (bl_alloc_count () == 0) {
    bl_alloc_fail_at (0);
    return;                    /* not an --enable-alloc-fail build */
  }
  for (n = 1;; n++) {
    bl_err err = { 0 };
    bl_alloc_fail_at (n);
    s = bl_spec_read_mem (text, len, "mem.spec", "/srv", &err);
    if (s)
      break;
    ck_assert_msg (err.code == BL_ENOMEM, "alloc failure n=%lu: code %d (%s: %s)", n,
                   err.code, err.where, err.msg);
  }
  bl_alloc_fail_at (0);
  ck_assert_msg (n > 20, "alloc failure: only %lu allocations", n);
  ck_assert_msg (bl_spec_njobs (s) == 2, "alloc failure: njobs %zu", bl_spec_njobs (s));
  ck_assert_str_eq (job_at (s, 0)->job.data, "/srv/pumps.csv.gz");
  bl_spec_free (s);

  /* The same through a file. */
  test_tmpdir (tmp, sizeof tmp);
  snprintf (path, sizeof path, "%s/a.spec", tmp);
  f = fopen (path, "w");
  ck_assert_ptr_nonnull (f);
  fwrite (text, 1, len, f);
  ck_assert_int_eq (fclose (f), 0);
  for (n = 1;; n++) {
    bl_err err = { 0 };
    bl_alloc_fail_at (n);
    s = bl_spec_read (path, &err);
    if (s)
      break;
    ck_assert_msg (err.code == BL_ENOMEM, "file alloc failure n=%lu: code %d (%s: %s)", n,
                   err.code, err.where, err.msg);
  }
  bl_alloc_fail_at (0);
  bl_spec_free (s);
  unlink (path);
  rmdir (tmp);
}
END_TEST

static Suite *
spec_suite (void)
{
  Suite *s = suite_create ("spec");
  TCase *err = tcase_create ("errors");
  TCase *bas = tcase_create ("basics");
  tcase_add_test (bas, spec_basics_good_values);
  tcase_add_test (bas, spec_basics_quotes_and_comments);
  tcase_add_test (bas, spec_basics_crlf_bom_utf8);
  tcase_add_test (bas, spec_basics_defaults_inheritance);
  tcase_add_test (bas, spec_errors_whole_job);
  tcase_add_test (bas, spec_basics_paths);
  tcase_add_test (bas, spec_basics_demo_file);
  tcase_add_test (bas, spec_basics_stem);
  tcase_add_test (bas, spec_basics_name_rules);
  tcase_add_test (bas, spec_basics_line_limit);
  tcase_add_test (bas, spec_basics_job_limit);
  tcase_add_test (err, spec_errors_each_class);
  tcase_add_test (err, spec_errors_nul_byte);
  tcase_add_test (err, spec_errors_first_wins_and_null_err);
  tcase_add_test (err, spec_errors_unreadable_file);
  tcase_add_test (err, spec_errors_alloc_failure);
  suite_add_tcase (s, err);
  suite_add_tcase (s, bas);
  return s;
}

int
main (void)
{
  return test_run_suite (spec_suite (), 0);
}
