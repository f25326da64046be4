/* check_options.c -- the one option table (src/lib/options.h): its entries are well formed;
   every key set as the command line sets it (bl_job_set with WHERE "--KEY") and as a spec
   file sets it gives the same bl_job; unknown keys and bad values give the messages they gave
   before the table existed, which win in the same order; and the key lists of doc/cli.md,
   doc/spec-format.md and doc/ballast.1 are exactly the table's keys.  The values and messages
   are ballast's own (job.h, doc/spec-format.md), not another program's. */
#include <check.h>
#include <ctype.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "family.h"
#include "job.h"
#include "link.h"
#include "options.h"
#include "testutil.h"

#ifndef BL_TEST_SRCDIR
#define BL_TEST_SRCDIR "."
#endif

#define MAX_DOC_KEYS 128
#define DOC_KEY_LEN 32

/* ------------------------------------------------------------------ helpers */

/* Whether two jobs hold the same settings (strings by content; the fit's column pointers
   are checked by content too, since they point into the job's own strings). */
static int
str_eq (const char *a, const char *b)
{
  return (!a && !b) || (a && b && strcmp (a, b) == 0);
}

static int
list_eq (char *const *a, size_t na, char *const *b, size_t nb)
{
  if (na != nb)
    return 0;
  for (size_t i = 0; i < na; i++)
    if (strcmp (a[i], b[i]) != 0)
      return 0;
  return 1;
}

/* Equal doubles, NaN (an unset default) equal to NaN. */
static int
num_eq (double a, double b)
{
  return a == b || (isnan (a) && isnan (b));
}

static int
fit_eq (const bl_fit_opts *a, const bl_fit_opts *b)
{
  return a->method == b->method && a->fam == b->fam && a->link == b->link
         && num_eq (a->level, b->level) && a->dispersion_pearson == b->dispersion_pearson
         && a->se == b->se && a->transform == b->transform && a->lambda_est == b->lambda_est
         && num_eq (a->lambda, b->lambda) && a->shift_given == b->shift_given
         && num_eq (a->shift, b->shift)
         && a->variance == b->variance && str_eq (a->variance_col, b->variance_col)
         && str_eq (a->cluster_col, b->cluster_col) && a->power_est == b->power_est
         && num_eq (a->power, b->power) && a->wls_max_iter == b->wls_max_iter
         && num_eq (a->fam_par, b->fam_par) && a->fam_par_est == b->fam_par_est
         && num_eq (a->irls.epsrel, b->irls.epsrel) && a->irls.max_iter == b->irls.max_iter
         && a->irls.max_halvings == b->irls.max_halvings
         && num_eq (a->irls.rank_tol, b->irls.rank_tol) && a->irls.solver == b->irls.solver
         && a->irls.threads == b->irls.threads;
}

static int
job_eq (const bl_job *a, const bl_job *b)
{
  return str_eq (a->data, b->data) && str_eq (a->response, b->response)
         && str_eq (a->terms, b->terms) && str_eq (a->weights, b->weights)
         && str_eq (a->offset, b->offset) && str_eq (a->candidates, b->candidates)
         && str_eq (a->varcol, b->varcol) && str_eq (a->against, b->against)
         && str_eq (a->cluster, b->cluster)
         && list_eq (a->categorical, a->ncat, b->categorical, b->ncat)
         && list_eq (a->reference, a->nref, b->reference, b->nref)
         && a->intercept == b->intercept && a->method_given == b->method_given
         && a->model_keys == b->model_keys && fit_eq (&a->fit, &b->fit)
         && a->table.delimiter == b->table.delimiter
         && a->table.decimal_comma == b->table.decimal_comma
         && a->table.threads == b->table.threads && a->folds == b->folds
         && a->seed == b->seed && a->seed_given == b->seed_given
         && a->fam_par_key == b->fam_par_key;
}

/* One case: up to four keys with their values (a flag's value NULL on the command line). */
typedef struct kv_case {
  const char *key[4], *value[4];
} kv_case;

/* The job the command line makes of case C: bl_job_set with WHERE "--KEY", as
   cli_model_option does, and DATA as cli_model_finish does, then bl_job_finish. */
static void
cli_job (const kv_case *c, bl_job *j)
{
  bl_err err = { 0 };
  char where[64];
  bl_job_init (j);
  ck_assert_int_eq (bl_job_set (j, "data", "d.csv", "DATA", &err), BL_OK);
  ck_assert_int_eq (bl_job_set (j, "response", "y", "--response", &err), BL_OK);
  for (size_t k = 0; k < 4 && c->key[k]; k++) {
    const char *v = c->value[k];
    snprintf (where, sizeof where, "--%s", c->key[k]);
    if (bl_job_key_is_flag (c->key[k]) && v && strcmp (v, "yes") == 0)
      v = NULL;                 /* --no-intercept: no value on the command line */
    ck_assert_msg (bl_job_set (j, c->key[k], v, where, &err) == BL_OK, "%s: %s: %s",
                   c->key[k], err.where, err.msg);
  }
  ck_assert_msg (bl_job_finish (j, j->model_keys && !j->candidates, "mem.spec:1", &err)
                 == BL_OK, "%s: finish: %s", c->key[0], err.msg);
}

/* The spec job of case C ("[job a]", data, response, then the keys). */
static bl_spec *
spec_job (const kv_case *c)
{
  char text[1024];
  size_t len;
  bl_err err = { 0 };
  bl_spec *s;
  len = (size_t) snprintf (text, sizeof text, "[job a]\ndata = d.csv\nresponse = y\n");
  for (size_t k = 0; k < 4 && c->key[k]; k++)
    len += (size_t) snprintf (text + len, sizeof text - len, "%s = %s\n", c->key[k],
                              c->value[k]);
  s = bl_spec_read_mem (text, len, "mem.spec", NULL, &err);
  ck_assert_msg (s != NULL, "%s: %s: %s", c->key[0], err.where, err.msg);
  return s;
}

/* ------------------------------------------------------------------ basics */

/* Every entry is well formed: keys lower case with hyphens, unique, found by name, short
   enough for spec.c; a setter; a shared option has its group and help, a spec-only key none;
   "  --KEY ARG" leaves room before the help column of the CLI (26). */
START_TEST (options_basics_table)
{
  const size_t n = bl_option_count ();
  ck_assert_msg (n > 0 && n < BL_OPTION_MAX, "count %zu", n);
  ck_assert_ptr_null (bl_option_at (n));
  ck_assert_ptr_null (bl_option_find ("Family"));
  ck_assert_ptr_null (bl_option_find (NULL));
  for (size_t i = 0; i < n; i++) {
    const bl_option *const o = bl_option_at (i);
    ck_assert_msg (strlen (o->key) > 0 && strlen (o->key) < 24, "%s: length", o->key);
    for (const char *p = o->key; *p; p++)
      ck_assert_msg (islower ((unsigned char) *p) || *p == '-', "%s: character", o->key);
    ck_assert_msg (bl_option_find (o->key) == o, "%s: find", o->key);
    ck_assert_msg (bl_option_index (o) == i, "%s: index", o->key);
    ck_assert_msg (o->set != NULL, "%s: no setter", o->key);
    ck_assert_msg (bl_job_has_key (o->key), "%s: has_key", o->key);
    ck_assert_msg (bl_job_key_is_flag (o->key) == (o->kind == BL_OPTION_FLAG), "%s: flag",
                   o->key);
    if (o->flags & BL_OPTION_CLI) {
      const size_t head = 4 + strlen (o->key) + (o->arg ? 1 + strlen (o->arg) : 0);
      ck_assert_msg (o->group && o->help && o->help[0], "%s: help", o->key);
      ck_assert_msg (head < 25, "%s: '  --%s %s' reaches the help column", o->key, o->key,
                     o->arg ? o->arg : "");
      ck_assert_msg ((o->kind == BL_OPTION_FLAG) == (o->arg == NULL), "%s: arg", o->key);
    } else {
      ck_assert_msg (!o->group && !o->help && !o->arg, "%s: help of a spec-only key",
                     o->key);
      ck_assert_msg (!(o->flags & (BL_OPTION_METHOD | BL_OPTION_CANDIDATE)), "%s: flags",
                     o->key);
    }
    /* the method-choosing and candidate keys are single-model keys */
    if (o->flags & (BL_OPTION_METHOD | BL_OPTION_CANDIDATE))
      ck_assert_msg (o->flags & BL_OPTION_MODEL, "%s: not a model key", o->key);
    for (size_t k = 0; k < i; k++)
      ck_assert_msg (strcmp (bl_option_at (k)->key, o->key) != 0, "%s: twice", o->key);
  }
}
END_TEST

/* Every key, set as the command line sets it and as a spec file sets it, gives the same job,
   and one that differs from the job without it (so a setter that did nothing would fail). */
START_TEST (options_basics_cli_equals_spec)
{
  static const kv_case cases[] = {
    { { "terms" }, { "x1, log(x2)" } },
    { { "no-intercept" }, { "yes" } },
    { { "method" }, { "ols" } },
    { { "family" }, { "gamma" } },
    { { "family", "theta" }, { "negative-binomial", "2.385" } },
    { { "family", "power" }, { "tweedie", "1.375" } },
    { { "family", "power" }, { "tweedie", "est" } },
    { { "link" }, { "sqrt" } },
    { { "variance" }, { "[load pct]^1.5" } },
    { { "variance" }, { "fitted^est" } },
    { { "transform" }, { "boxcox=0.25" } },
    { { "transform", "shift" }, { "log", "3.25" } },
    { { "transform" }, { "boxcox" } },
    { { "weights", "method" }, { "w", "wls" } },
    { { "offset" }, { "log(hours)" } },
    { { "categorical" }, { "site, duty" } },
    { { "reference" }, { "site=north, duty=light=x" } },
    { { "dispersion" }, { "pearson" } },
    { { "level", "method" }, { "0.875", "glm" } },
    { { "against", "terms" }, { "x1", "x1, log(x2)" } },
    { { "se", "method" }, { "hc2", "glm" } },
    { { "se", "cluster", "method" }, { "cluster", "site", "glm" } },
    { { "delimiter" }, { "tab" } },
    { { "delimiter" }, { ";" } },
    { { "decimal-comma", "delimiter" }, { "yes", ";" } },
    { { "max-iter" }, { "17" } },
    { { "epsilon" }, { "2.5e-7" } },
    { { "solver" }, { "streamed" } },
    { { "threads" }, { "1" } },
    { { "candidates" }, { "ls, gam-log" } },
    { { "folds" }, { "0" } },
    { { "seed" }, { "7345" } }
  };
  bl_job plain;
  const kv_case none = { { NULL }, { NULL } };
  int covered[BL_OPTION_MAX] = { 0 };
  cli_job (&none, &plain);
  for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
    bl_job j;
    bl_spec *s;
    cli_job (&cases[i], &j);
    s = spec_job (&cases[i]);
    ck_assert_msg (job_eq (&j, &bl_spec_get (s, 0)->job), "case %zu (%s): command line and "
                   "spec differ", i, cases[i].key[0]);
    ck_assert_msg (!job_eq (&j, &plain), "case %zu (%s): no effect", i, cases[i].key[0]);
    for (size_t k = 0; k < 4 && cases[i].key[k]; k++)
      covered[bl_option_index (bl_option_find (cases[i].key[k]))] = 1;
    bl_spec_free (s);
    bl_job_clear (&j);
  }
  covered[bl_option_index (bl_option_find ("data"))] = 1;
  covered[bl_option_index (bl_option_find ("response"))] = 1;
  for (size_t i = 0; i < bl_option_count (); i++)
    ck_assert_msg (covered[i], "key '%s' has no case", bl_option_at (i)->key);
  bl_job_clear (&plain);
}
END_TEST

/* A few values land where job.h says (the cases above only show both paths agree). */
START_TEST (options_basics_values)
{
  bl_job j;
  bl_err err = { 0 };
  bl_job_init (&j);
  ck_assert_int_eq (bl_job_set (&j, "family", "negative-binomial", "--family", &err), BL_OK);
  ck_assert_ptr_eq (j.fit.fam, &bl_family_negbin);
  ck_assert_int_eq (j.model_keys, 1);
  ck_assert_int_eq (bl_job_set (&j, "link", "log", "--link", &err), BL_OK);
  ck_assert_ptr_eq (j.fit.link, bl_link_find ("log"));
  ck_assert_int_eq (bl_job_set (&j, "no-intercept", NULL, "--no-intercept", &err), BL_OK);
  ck_assert_int_eq (j.intercept, 0);
  ck_assert_int_eq (bl_job_set (&j, "no-intercept", "false", "x", &err), BL_OK);
  ck_assert_int_eq (j.intercept, 1);
  ck_assert_int_eq (bl_job_set (&j, "decimal-comma", "1", "x", &err), BL_OK);
  ck_assert_int_eq (j.table.decimal_comma, 1);
  ck_assert_int_eq (bl_job_set (&j, "se", "cluster", "x", &err), BL_OK);
  ck_assert_int_eq (j.fit.se, BL_SE_CLUSTER);
  ck_assert_int_eq (bl_job_set (&j, "solver", "extended", "x", &err), BL_OK);
  ck_assert_int_eq (j.fit.irls.solver, BL_SOLVER_EXTENDED);
  ck_assert_int_eq (bl_job_set (&j, "method", "wls", "x", &err), BL_OK);
  ck_assert_int_eq (j.fit.method, BL_METHOD_WLS);
  ck_assert_int_eq (j.method_given, 1);
  ck_assert_int_eq (bl_job_set (&j, "threads", "1", "x", &err), BL_OK);
  ck_assert_uint_eq (j.fit.irls.threads, 1);
  ck_assert_uint_eq (j.table.threads, 1);
  ck_assert_int_eq (bl_job_set (&j, "cluster", "site", "x", &err), BL_OK);
  ck_assert_str_eq (j.fit.cluster_col, "site");
  ck_assert_int_eq (bl_job_set (&j, "variance", "load^2.5", "x", &err), BL_OK);
  ck_assert_str_eq (j.fit.variance_col, "load");
  ck_assert (j.fit.power == 2.5 && !j.fit.power_est);
  ck_assert_int_eq (bl_job_set (&j, "reference", "a=1", "x", &err), BL_OK);
  ck_assert_int_eq (bl_job_set (&j, "reference", "b=2,c=3", "x", &err), BL_OK);
  ck_assert_uint_eq (j.nref, 3);
  ck_assert_int_eq (bl_job_set (&j, "categorical", "p,q", "x", &err), BL_OK);
  ck_assert_int_eq (bl_job_set (&j, "categorical", "r", "x", &err), BL_OK);
  ck_assert_uint_eq (j.ncat, 1);
  ck_assert_str_eq (j.categorical[0], "r");
  bl_job_clear (&j);
}
END_TEST

/* ------------------------------------------------------------------ errors */

/* Each bad value gives the message it gave before the table (bl_job_set's old ladder), at
   WHERE, on the command line and in a spec file (at the key's line). */
START_TEST (options_errors_messages)
{
  static const struct {
    const char *key, *value, *msg;
  } cases[] = {
    { "bogus", "1", "unknown key 'bogus'" },
    { "terms", "", "'terms' needs a value" },
    { "cluster", "", "'cluster' needs a value" },
    { "no-intercept", "maybe", "expected yes or no, got 'maybe'" },
    { "decimal-comma", "", "expected yes or no, got ''" },
    { "method", "gls", "unknown method 'gls' (expected glm, ols or wls)" },
    { "family", "poison", "unknown family 'poison' (expected gaussian, poisson, gamma, "
      "inverse-gaussian, negative-binomial, tweedie)" },
    { "reference", "g=a,g=b", "two reference levels for one column: 'g=a' and 'g=b'" },
    { "link", "logit", "unknown link 'logit' (expected identity, log, inverse or sqrt)" },
    { "variance", "x^", "expected COL^K or fitted^K with K a number or 'est', got 'x^'" },
    { "variance", "[]^2", "expected COL^K or fitted^K with K a number or 'est', got '[]^2'" },
    { "transform", "boxcox=a", "expected log, sqrt, boxcox or boxcox=L, got 'boxcox=a'" },
    { "shift", "1e999", "expected a number, got '1e999'" },
    { "se", "hc4", "expected model, hc0, hc1, hc2, hc3 or cluster, got 'hc4'" },
    { "dispersion", "", "expected model or pearson, got ''" },
    { "categorical", "a,,b", "expected a comma-separated list of column names, got 'a,,b'" },
    { "reference", "a=1,b", "expected COL=LEVEL, got 'a=1,b'" },
    { "theta", "0", "expected a positive number, got '0'" },
    { "power", "2", "expected a number strictly between 1 and 2, or 'est', got '2'" },
    { "level", "1", "expected a number between 0 and 1, got '1'" },
    { "delimiter", "\"", "expected one character (or 'tab'), got '\"'" },
    { "max-iter", "0", "expected a positive integer, got '0'" },
    { "epsilon", "-1", "expected a positive number, got '-1'" },
    { "solver", "fast", "expected auto, extended or streamed, got 'fast'" },
    { "threads", "3", "expected 1 or 2, got '3'" },
    { "folds", "1", "expected 0 or an integer >= 2, got '1'" },
    { "seed", "-1", "expected a non-negative integer, got '-1'" }
  };
  for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
    bl_job j;
    bl_err err = { 0 };
    char text[512];
    bl_spec *s;
    const int n = snprintf (text, sizeof text, "[job a]\ndata = d.csv\n%s = %s\n",
                            cases[i].key, cases[i].value);
    bl_job_init (&j);
    ck_assert_msg (bl_job_set (&j, cases[i].key, cases[i].value, "--k", &err) == BL_ESPEC,
                   "%s: code %d", cases[i].key, err.code);
    ck_assert_msg (strcmp (err.where, "--k") == 0, "%s: where '%s'", cases[i].key,
                   err.where);
    ck_assert_msg (strcmp (err.msg, cases[i].msg) == 0, "%s: '%s', expected '%s'",
                   cases[i].key, err.msg, cases[i].msg);
    bl_job_clear (&j);
    if (cases[i].value[0] == '\0' || cases[i].value[0] == '"')
      continue;                 /* not a value a spec line can write this way */
    s = bl_spec_read_mem (text, (size_t) n, "mem.spec", NULL, &err);
    ck_assert_msg (s == NULL && err.code == BL_ESPEC, "%s: spec", cases[i].key);
    ck_assert_msg (strcmp (err.where, "mem.spec:3") == 0, "%s: spec where '%s'",
                   cases[i].key, err.where);
    ck_assert_msg (strcmp (err.msg, cases[i].msg) == 0, "%s: spec '%s'", cases[i].key,
                   err.msg);
  }
}
END_TEST

/* The checks come in the order they did: an unknown key before a missing value, a missing
   value before the value's own check, and a flag may go without a value. */
START_TEST (options_errors_order)
{
  bl_job j;
  bl_err err = { 0 };
  bl_job_init (&j);
  ck_assert_int_eq (bl_job_set (&j, "Family", NULL, "w", &err), BL_ESPEC);
  ck_assert_str_eq (err.msg, "unknown key 'Family'");
  ck_assert_int_eq (bl_job_set (&j, "level", NULL, "w", &err), BL_ESPEC);
  ck_assert_str_eq (err.msg, "'level' needs a value");
  ck_assert_int_eq (bl_job_set (&j, "data", NULL, "w", &err), BL_ESPEC);
  ck_assert_str_eq (err.msg, "'data' needs a value");
  ck_assert_int_eq (bl_job_set (&j, "decimal-comma", NULL, "w", &err), BL_OK);
  /* a bad candidate list keeps compare's message, with our where */
  ck_assert_int_eq (bl_job_set (&j, "candidates", "ls,zz", "w:1", &err), BL_ESPEC);
  ck_assert_str_eq (err.where, "w:1");
  /* a family parameter without its family is refused by the job's check */
  ck_assert_int_eq (bl_job_set (&j, "response", "y", "w", &err), BL_OK);
  ck_assert_int_eq (bl_job_set (&j, "theta", "2", "w", &err), BL_OK);
  ck_assert_int_eq (bl_job_finish (&j, 1, NULL, &err), BL_ESPEC);
  ck_assert_str_eq (err.where, "--theta");
  ck_assert_str_eq (err.msg, "theta applies to --family negative-binomial only");
  bl_job_clear (&j);
  bl_job_init (&j);
  ck_assert_int_eq (bl_job_set (&j, "response", "y", "w", &err), BL_OK);
  ck_assert_int_eq (bl_job_set (&j, "family", "negative-binomial", "w", &err), BL_OK);
  ck_assert_int_eq (bl_job_set (&j, "power", "est", "w", &err), BL_OK);
  ck_assert_int_eq (bl_job_finish (&j, 1, NULL, &err), BL_ESPEC);
  ck_assert_str_eq (err.where, "--power");
  ck_assert_str_eq (err.msg, "power applies to --family tweedie only");
  bl_job_clear (&j);
}
END_TEST

/* ------------------------------------------------------------------ the docs' key lists */

typedef struct doc_keys {
  char key[MAX_DOC_KEYS][DOC_KEY_LEN];
  size_t n;
} doc_keys;

static char *
read_doc (const char *name)
{
  char path[4096];
  FILE *f;
  long len;
  char *text;
  snprintf (path, sizeof path, "%s/doc/%s", BL_TEST_SRCDIR, name);
  f = fopen (path, "rb");
  ck_assert_msg (f != NULL, "cannot open %s", path);
  ck_assert (fseek (f, 0, SEEK_END) == 0 && (len = ftell (f)) > 0);
  rewind (f);
  text = malloc ((size_t) len + 1);
  ck_assert (text != NULL);
  ck_assert (fread (text, 1, (size_t) len, f) == (size_t) len);
  text[len] = '\0';
  fclose (f);
  return text;
}

/* Add the key of WORD[0..LEN) (without leading dashes, up to a space) to KS. */
static void
add_key (doc_keys *ks, const char *word, size_t len, const char *doc)
{
  size_t l = 0;
  while (len > 0 && *word == '-') {
    word++;
    len--;
  }
  while (l < len && word[l] != ' ')
    l++;
  ck_assert_msg (l > 0 && l < DOC_KEY_LEN && ks->n < MAX_DOC_KEYS, "%s: key '%.*s'", doc,
                 (int) len, word);
  memcpy (ks->key[ks->n], word, l);
  ks->key[ks->n++][l] = '\0';
}

/* The `quoted` words of TEXT[0..LEN). */
static void
backticked (doc_keys *ks, const char *text, size_t len, const char *doc)
{
  const char *p = text, *const end = text + len;
  while (p < end && (p = memchr (p, '`', (size_t) (end - p))) != NULL) {
    const char *q = memchr (p + 1, '`', (size_t) (end - p - 1));
    ck_assert_msg (q != NULL, "%s: unclosed '`'", doc);
    add_key (ks, p + 1, (size_t) (q - p - 1), doc);
    p = q + 1;
  }
}

/* The keys in the first column of the markdown table that follows HEADING in TEXT. */
static void
table_keys (doc_keys *ks, const char *text, const char *heading, const char *doc)
{
  const char *p = strstr (text, heading);
  ck_assert_msg (p != NULL, "%s: no '%s'", doc, heading);
  p = strchr (p, '\n') + 1;                       /* the |---| line */
  p = strchr (p, '\n') + 1;
  while (*p == '|') {
    const char *cell = p + 1, *e = cell;
    while (*e && *e != '\n' && !(*e == '|' && e[-1] != '\\'))
      e++;
    backticked (ks, cell, (size_t) (e - cell), doc);
    p = strchr (p, '\n');
    if (!p)
      break;
    p++;
  }
}

/* The keys of the list between FROM and the first TO after it: `quoted` words in markdown,
   comma-separated words (with "and"/"or" before the last) in the manual page. */
static void
list_keys (doc_keys *ks, const char *text, const char *from, const char *to, int quoted,
           const char *doc)
{
  const char *p = strstr (text, from), *e;
  ck_assert_msg (p != NULL, "%s: no '%s'", doc, from);
  p += strlen (from);
  e = strstr (p, to);
  ck_assert_msg (e != NULL, "%s: no '%s' after '%s'", doc, to, from);
  if (quoted) {
    backticked (ks, p, (size_t) (e - p), doc);
    return;
  }
  while (p < e) {
    const char *w;
    size_t l;
    while (p < e && (*p == ' ' || *p == ',' || *p == '\n'))
      p++;
    for (w = p; p < e && *p != ',' && *p != ' ' && *p != '\n'; p++)
      ;
    l = (size_t) (p - w);
    if (l > 0 && !(l == 2 && !strncmp (w, "or", 2)) && !(l == 3 && !strncmp (w, "and", 3)))
      add_key (ks, w, l, doc);
  }
}

/* KS is exactly the keys of the table with every bit of FLAGS (0: every key), each once. */
static void
same_keys (const doc_keys *ks, unsigned flags, const char *what)
{
  for (size_t i = 0; i < ks->n; i++) {
    const bl_option *const o = bl_option_find (ks->key[i]);
    ck_assert_msg (o != NULL, "%s lists '%s', which the option table lacks", what,
                   ks->key[i]);
    ck_assert_msg ((o->flags & flags) == flags, "%s lists '%s', which is not of that kind "
                   "in the option table", what, ks->key[i]);
    for (size_t k = 0; k < i; k++)
      ck_assert_msg (strcmp (ks->key[k], ks->key[i]) != 0, "%s lists '%s' twice", what,
                     ks->key[i]);
  }
  for (size_t i = 0; i < bl_option_count (); i++) {
    const bl_option *const o = bl_option_at (i);
    int found = 0;
    if ((o->flags & flags) != flags)
      continue;
    for (size_t k = 0; k < ks->n && !found; k++)
      found = strcmp (ks->key[k], o->key) == 0;
    ck_assert_msg (found, "%s lacks '%s', a key of the option table", what, o->key);
  }
}

START_TEST (options_docs_spec_format)
{
  char *const text = read_doc ("spec-format.md");
  doc_keys ks = { .n = 0 };
  table_keys (&ks, text, "| key | meaning |", "spec-format.md");
  same_keys (&ks, 0, "doc/spec-format.md's key table");
  ks.n = 0;
  list_keys (&ks, text, "any of the single-model keys", ";", 1, "spec-format.md");
  same_keys (&ks, BL_OPTION_MODEL, "doc/spec-format.md's single-model keys");
  free (text);
}
END_TEST

START_TEST (options_docs_cli)
{
  char *const text = read_doc ("cli.md");
  doc_keys ks = { .n = 0 };
  table_keys (&ks, text, "| option | meaning |\n|---|---|\n| `--response", "cli.md");
  same_keys (&ks, BL_OPTION_CLI, "doc/cli.md's model options");
  ks.n = 0;
  list_keys (&ks, text, "The keys are the model option names without dashes:", ";",
             1, "cli.md");
  same_keys (&ks, 0, "doc/cli.md's spec keys");
  ks.n = 0;
  list_keys (&ks, text, "single-model key (", ")", 1, "cli.md");
  same_keys (&ks, BL_OPTION_MODEL, "doc/cli.md's single-model keys");
  ks.n = 0;
  list_keys (&ks, text, "`compare` refuses", "(exit 2)", 1, "cli.md");
  same_keys (&ks, BL_OPTION_CANDIDATE, "doc/cli.md's keys compare refuses");
  ks.n = 0;
  list_keys (&ks, text, "Fits ordinary least squares unless", "chooses another", 1, "cli.md");
  same_keys (&ks, BL_OPTION_METHOD, "doc/cli.md's keys that choose diagnose's model");
  free (text);
}
END_TEST

START_TEST (options_docs_manual)
{
  char *const text = read_doc ("ballast.1");
  doc_keys ks = { .n = 0 };
  list_keys (&ks, text, "without the dashes (", ")", 0, "ballast.1");
  same_keys (&ks, 0, "doc/ballast.1's spec keys");
  ks.n = 0;
  list_keys (&ks, text, "A job that names a single model (", ")", 0, "ballast.1");
  same_keys (&ks, BL_OPTION_MODEL, "doc/ballast.1's single-model keys");
  free (text);
}
END_TEST

static Suite *
options_suite (void)
{
  Suite *s = suite_create ("options");
  TCase *err = tcase_create ("errors");
  TCase *bas = tcase_create ("basics");
  TCase *doc = tcase_create ("docs");
  tcase_add_test (bas, options_basics_table);
  tcase_add_test (bas, options_basics_cli_equals_spec);
  tcase_add_test (bas, options_basics_values);
  tcase_add_test (err, options_errors_messages);
  tcase_add_test (err, options_errors_order);
  tcase_add_test (doc, options_docs_spec_format);
  tcase_add_test (doc, options_docs_cli);
  tcase_add_test (doc, options_docs_manual);
  suite_add_tcase (s, err);
  suite_add_tcase (s, bas);
  suite_add_tcase (s, doc);
  return s;
}

int
main (void)
{
  return test_run_suite (options_suite (), 0);
}
