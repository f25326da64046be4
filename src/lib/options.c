/* options.c -- the one table of a job's keys and the setters that read their values into a
   bl_job (see options.h).

   A value is read the same way whether it comes from the command line (--family gamma) or
   from a spec file (family = gamma), and refused with the same message: only WHERE differs
   ("--family" or "pumps.spec:12").  Adding a key is one entry here (and its setter when no
   existing one fits), the bl_job field it fills, and its line in the docs' key lists, which
   tests/check_options.c compares with this table. */
#include <errno.h>
#include <math.h>
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "alloc.h"
#include "job.h"
#include "options.h"

#define BAD(...) return bl_fail (err, BL_ESPEC, where, __VA_ARGS__)
#define NOMEM() return bl_fail (err, BL_ENOMEM, where, "out of memory")
#define NWORDS(w) (sizeof (w) / sizeof (w)[0])

/* ------------------------------------------------------------------ value parsers */

static int
parse_double (const char *s, double *out)
{
  char *end;
  double v;
  if (!s || !*s)
    return -1;
  errno = 0;
  v = strtod (s, &end);
  if (end == s || *end != '\0' || errno == ERANGE || !isfinite (v))
    return -1;
  *out = v;
  return 0;
}

/* A whole integer >= MIN; 0 on success. */
static int
parse_count (const char *s, size_t min, size_t *out)
{
  char *end;
  unsigned long long v;
  if (!s || *s == '-' || *s == '+' || *s == '\0')
    return -1;
  errno = 0;
  v = strtoull (s, &end, 10);
  if (*end != '\0' || errno == ERANGE || v < min || v > (unsigned long long) SIZE_MAX)
    return -1;
  *out = (size_t) v;
  return 0;
}

static int
parse_flag (const char *v, int *out)
{
  if (!v || !strcmp (v, "yes") || !strcmp (v, "true") || !strcmp (v, "1")) {
    *out = 1;
    return 0;
  }
  if (!strcmp (v, "no") || !strcmp (v, "false") || !strcmp (v, "0")) {
    *out = 0;
    return 0;
  }
  return -1;
}

/* The index of V among the N WORDS, or -1. */
static int
choose (const char *v, const char *const *words, size_t n)
{
  for (size_t i = 0; i < n; i++)
    if (strcmp (v, words[i]) == 0)
      return (int) i;
  return -1;
}

/* BL_ESPEC for a value that is none of the N WORDS: "expected A, B or C, got 'V'", or, when
   KEY is given, "unknown KEY 'V' (expected A, B or C)". */
static int
bad_choice (const char *v, const char *const *words, size_t n, const char *key,
            const char *where, bl_err *err)
{
  char list[256];
  size_t len = 0;
  list[0] = '\0';
  for (size_t i = 0; i < n && len < sizeof list; i++)
    len += (size_t) snprintf (list + len, sizeof list - len, "%s%s",
                              i == 0 ? "" : i + 1 == n ? " or " : ", ", words[i]);
  if (key)
    BAD ("unknown %s '%s' (expected %s)", key, v, list);
  BAD ("expected %s, got '%s'", list, v);
}

static int
dup_into (char **dst, const char *src)
{
  char *c = NULL;
  if (src && !(c = bl_strdup (src)))
    return BL_ENOMEM;
  bl_free (*dst);
  *dst = c;
  return BL_OK;
}

/* Split VALUE on commas into trimmed, non-empty copies appended to LIST; -1 on an empty
   entry or too many, -2 on exhaustion. */
static int
split_into (const char *value, char **list, size_t *n)
{
  const char *s = value;
  for (;;) {
    const char *comma = strchr (s, ','), *e = comma ? comma : s + strlen (s);
    char *c;
    while (s < e && *s == ' ')
      s++;
    while (e > s && e[-1] == ' ')
      e--;
    if (e == s || *n >= BL_JOB_MAX_LIST)
      return -1;
    c = bl_malloc ((size_t) (e - s) + 1);
    if (!c)
      return -2;
    memcpy (c, s, (size_t) (e - s));
    c[e - s] = '\0';
    list[(*n)++] = c;
    if (!comma)
      return 0;
    s = comma + 1;
  }
}

/* ------------------------------------------------------------------ setters shared by kind */

/* A non-empty string, copied into the char * at O->field. */
static int
set_string (bl_job *j, const bl_option *o, const char *v, const char *where, bl_err *err)
{
  char **const dst = (char **) (void *) ((char *) j + o->field);
  if (!*v)
    BAD ("'%s' needs a value", o->key);
  if (dup_into (dst, v) != BL_OK)
    NOMEM ();
  j->fit.cluster_col = j->cluster;
  return BL_OK;
}

/* A flag into the int at O->field; set_flag_not stores its negation (no-intercept). */
static int
flag_into (bl_job *j, const bl_option *o, const char *v, int negate, const char *where,
           bl_err *err)
{
  int f;
  if (parse_flag (v, &f) != 0)
    BAD ("expected yes or no, got '%s'", v ? v : "");
  *(int *) (void *) ((char *) j + o->field) = negate ? !f : f;
  return BL_OK;
}

static int
set_flag (bl_job *j, const bl_option *o, const char *v, const char *where, bl_err *err)
{
  return flag_into (j, o, v, 0, where, err);
}

static int
set_flag_not (bl_job *j, const bl_option *o, const char *v, const char *where, bl_err *err)
{
  return flag_into (j, o, v, 1, where, err);
}

/* ------------------------------------------------------------------ choices */

static int
set_method (bl_job *j, const bl_option *o, const char *v, const char *where, bl_err *err)
{
  static const char *const words[] = { "glm", "ols", "wls" };  /* bl_method order */
  const int k = choose (v, words, NWORDS (words));
  j->method_given = 1;
  if (k < 0)
    return bad_choice (v, words, NWORDS (words), o->key, where, err);
  j->fit.method = (bl_method) k;
  return BL_OK;
}

static int
set_family (bl_job *j, const bl_option *o, const char *v, const char *where, bl_err *err)
{
  (void) o;
  if (!(j->fit.fam = bl_family_find (v))) {
    char list[512];
    bl_family_names (list, sizeof list, ", ");   /* every family of the table */
    BAD ("unknown family '%s' (expected %s)", v, list);
  }
  return BL_OK;
}

static int
set_link (bl_job *j, const bl_option *o, const char *v, const char *where, bl_err *err)
{
  (void) o;
  if (!(j->fit.link = bl_link_find (v)))
    BAD ("unknown link '%s' (expected identity, log, inverse or sqrt)", v);
  return BL_OK;
}

static int
set_se (bl_job *j, const bl_option *o, const char *v, const char *where, bl_err *err)
{
  static const char *const words[] = { "model", "hc0", "hc1", "hc2", "hc3", "cluster" };
  const int k = choose (v, words, NWORDS (words));              /* bl_se_kind order */
  (void) o;
  if (k < 0)
    return bad_choice (v, words, NWORDS (words), NULL, where, err);
  j->fit.se = (bl_se_kind) k;
  return BL_OK;
}

static int
set_dispersion (bl_job *j, const bl_option *o, const char *v, const char *where,
                bl_err *err)
{
  static const char *const words[] = { "model", "pearson" };
  const int k = choose (v, words, NWORDS (words));
  (void) o;
  if (k < 0)
    return bad_choice (v, words, NWORDS (words), NULL, where, err);
  j->fit.dispersion_pearson = k;
  return BL_OK;
}

static int
set_solver (bl_job *j, const bl_option *o, const char *v, const char *where, bl_err *err)
{
  static const char *const words[] = { "auto", "extended", "streamed" };  /* bl_solver order */
  const int k = choose (v, words, NWORDS (words));
  (void) o;
  if (k < 0)
    return bad_choice (v, words, NWORDS (words), NULL, where, err);
  j->fit.irls.solver = (bl_solver) k;
  return BL_OK;
}

/* ------------------------------------------------------------------ model forms */

/* variance = COL^K | fitted^K, K a number or 'est'; COL may be in brackets.  0, -1 on a bad
   form, -2 on exhaustion. */
static int
read_variance (bl_job *j, const char *v)
{
  const char *hat = strrchr (v, '^');
  size_t len;
  char *col;
  if (!hat || hat == v || hat[1] == '\0')
    return -1;
  if (strcmp (hat + 1, "est") == 0) {
    j->fit.power_est = 1;
  } else {
    if (parse_double (hat + 1, &j->fit.power) != 0)
      return -1;
    j->fit.power_est = 0;
  }
  len = (size_t) (hat - v);
  if (len == 6 && strncmp (v, "fitted", 6) == 0) {
    j->fit.variance = BL_VARIANCE_FITTED;
    bl_free (j->varcol);
    j->varcol = NULL;
    j->fit.variance_col = NULL;
    return 0;
  }
  if (v[0] == '[') {
    if (len < 3 || v[len - 1] != ']')
      return -1;
    v++;
    len -= 2;
  }
  col = bl_malloc (len + 1);
  if (!col)
    return -2;
  memcpy (col, v, len);
  col[len] = '\0';
  bl_free (j->varcol);
  j->varcol = col;
  j->fit.variance = BL_VARIANCE_COLUMN;
  j->fit.variance_col = col;
  return 0;
}

static int
set_variance (bl_job *j, const bl_option *o, const char *v, const char *where, bl_err *err)
{
  const int r = read_variance (j, v);
  (void) o;
  if (r == -2)
    NOMEM ();
  if (r != 0)
    BAD ("expected COL^K or fitted^K with K a number or 'est', got '%s'", v);
  return BL_OK;
}

static int
set_transform (bl_job *j, const bl_option *o, const char *v, const char *where, bl_err *err)
{
  bl_fit_opts *const fo = &j->fit;
  (void) o;
  fo->lambda_est = 0;
  if (!strcmp (v, "log"))
    fo->transform = BL_TRANSFORM_LOG;
  else if (!strcmp (v, "sqrt"))
    fo->transform = BL_TRANSFORM_SQRT;
  else if (!strcmp (v, "boxcox")) {
    fo->transform = BL_TRANSFORM_BOXCOX;
    fo->lambda_est = 1;
  } else if (!strncmp (v, "boxcox=", 7) && parse_double (v + 7, &fo->lambda) == 0)
    fo->transform = BL_TRANSFORM_BOXCOX;
  else
    BAD ("expected log, sqrt, boxcox or boxcox=L, got '%s'", v);
  return BL_OK;
}

/* ------------------------------------------------------------------ numbers */

static int
set_shift (bl_job *j, const bl_option *o, const char *v, const char *where, bl_err *err)
{
  (void) o;
  if (parse_double (v, &j->fit.shift) != 0)
    BAD ("expected a number, got '%s'", v);
  j->fit.shift_given = 1;
  return BL_OK;
}

static int
set_theta (bl_job *j, const bl_option *o, const char *v, const char *where, bl_err *err)
{
  bl_fit_opts *const fo = &j->fit;
  (void) o;
  j->fam_par_key = 't';
  if (parse_double (v, &fo->fam_par) != 0 || !(fo->fam_par > 0.0))
    BAD ("expected a positive number, got '%s'", v);
  fo->fam_par_est = 0;
  return BL_OK;
}

static int
set_power (bl_job *j, const bl_option *o, const char *v, const char *where, bl_err *err)
{
  bl_fit_opts *const fo = &j->fit;
  (void) o;
  j->fam_par_key = 'p';
  if (!strcmp (v, "est")) {
    fo->fam_par_est = 1;
    return BL_OK;
  }
  if (parse_double (v, &fo->fam_par) != 0 || !(fo->fam_par > 1.0 && fo->fam_par < 2.0))
    BAD ("expected a number strictly between 1 and 2, or 'est', got '%s'", v);
  fo->fam_par_est = 0;
  return BL_OK;
}

static int
set_level (bl_job *j, const bl_option *o, const char *v, const char *where, bl_err *err)
{
  bl_fit_opts *const fo = &j->fit;
  (void) o;
  if (parse_double (v, &fo->level) != 0 || !(fo->level > 0.0 && fo->level < 1.0))
    BAD ("expected a number between 0 and 1, got '%s'", v);
  return BL_OK;
}

static int
set_epsilon (bl_job *j, const bl_option *o, const char *v, const char *where, bl_err *err)
{
  bl_irls_opts *const io = &j->fit.irls;
  (void) o;
  if (parse_double (v, &io->epsrel) != 0 || !(io->epsrel > 0.0))
    BAD ("expected a positive number, got '%s'", v);
  return BL_OK;
}

static int
set_max_iter (bl_job *j, const bl_option *o, const char *v, const char *where, bl_err *err)
{
  (void) o;
  if (parse_count (v, 1, &j->fit.irls.max_iter) != 0)
    BAD ("expected a positive integer, got '%s'", v);
  return BL_OK;
}

static int
set_threads (bl_job *j, const bl_option *o, const char *v, const char *where, bl_err *err)
{
  size_t t;
  (void) o;
  if (parse_count (v, 1, &t) != 0 || t > 2)
    BAD ("expected 1 or 2, got '%s'", v);
  j->fit.irls.threads = (unsigned) t;
  j->table.threads = (unsigned) t;
  return BL_OK;
}

static int
set_folds (bl_job *j, const bl_option *o, const char *v, const char *where, bl_err *err)
{
  size_t f;
  (void) o;
  if (parse_count (v, 0, &f) != 0 || f == 1)
    BAD ("expected 0 or an integer >= 2, got '%s'", v);
  j->folds = f;
  return BL_OK;
}

static int
set_seed (bl_job *j, const bl_option *o, const char *v, const char *where, bl_err *err)
{
  size_t s;
  (void) o;
  if (parse_count (v, 0, &s) != 0)
    BAD ("expected a non-negative integer, got '%s'", v);
  j->seed = (unsigned long) s;
  j->seed_given = 1;
  return BL_OK;
}

/* ------------------------------------------------------------------ lists and text */

/* A comma list of column names, replacing the previous one. */
static int
set_categorical (bl_job *j, const bl_option *o, const char *v, const char *where,
                 bl_err *err)
{
  char *tmp[BL_JOB_MAX_LIST];
  size_t nt = 0;
  const int r = split_into (v, tmp, &nt);
  (void) o;
  if (r != 0) {
    for (size_t i = 0; i < nt; i++)
      bl_free (tmp[i]);
    if (r == -2)
      NOMEM ();
    BAD ("expected a comma-separated list of column names, got '%s'", v);
  }
  for (size_t i = 0; i < j->ncat; i++)
    bl_free (j->categorical[i]);
  memcpy (j->categorical, tmp, nt * sizeof tmp[0]);
  j->ncat = nt;
  return BL_OK;
}

/* Whether reference entries A and B name the same column: their text up to the first '='
   is the same (design.c takes the first prefix ending at an '=' that is a column, and two
   entries with the same first prefix name the same column, or fail there alike). */
static int
same_ref_column (const char *a, const char *b)
{
  const size_t la = (size_t) (strchr (a, '=') - a), lb = (size_t) (strchr (b, '=') - b);
  return la == lb && strncmp (a, b, la) == 0;
}

/* A comma list of COL=LEVEL entries, added to the previous ones.  A column given two
   different levels (here, or here and before: the defaults of a spec) is refused now, at
   the option or line that gives the second, rather than when the design is built. */
static int
set_reference (bl_job *j, const bl_option *o, const char *v, const char *where, bl_err *err)
{
  const size_t n0 = j->nref;
  const int r = split_into (v, j->reference, &j->nref);
  int ok = r == 0;
  size_t clash = 0, first = 0;
  (void) o;
  for (size_t i = n0; ok && i < j->nref; i++)
    ok = strchr (j->reference[i], '=') != NULL && j->reference[i][0] != '=';
  for (size_t i = n0; ok && !clash && i < j->nref; i++)
    for (size_t k = 0; k < i && !clash; k++)
      if (same_ref_column (j->reference[k], j->reference[i])
          && strcmp (j->reference[k], j->reference[i]) != 0) {
        clash = i + 1;
        first = k;
      }
  if (!ok || clash) {
    int st;
    if (clash)
      st = bl_fail (err, BL_ESPEC, where, "two reference levels for one column: '%s' and "
                    "'%s'", j->reference[first], j->reference[clash - 1]);
    else if (r == -2)
      st = bl_fail (err, BL_ENOMEM, where, "out of memory");
    else
      st = bl_fail (err, BL_ESPEC, where, "expected COL=LEVEL, got '%s'", v);
    for (size_t i = n0; i < j->nref; i++)
      bl_free (j->reference[i]);
    j->nref = n0;
    return st;
  }
  return BL_OK;
}

static int
set_delimiter (bl_job *j, const bl_option *o, const char *v, const char *where, bl_err *err)
{
  (void) o;
  if (!strcmp (v, "\\t") || !strcmp (v, "tab"))
    j->table.delimiter = '\t';
  else if (strlen (v) == 1 && v[0] != '"' && v[0] != '\n' && v[0] != '\r')
    j->table.delimiter = v[0];
  else
    BAD ("expected one character (or 'tab'), got '%s'", v);
  return BL_OK;
}

/* The candidate list of a comparison, checked by compare.c (its message, our WHERE). */
static int
set_candidates (bl_job *j, const bl_option *o, const char *v, const char *where,
                bl_err *err)
{
  (void) o;
  if (bl_compare_check_list (v, err) != BL_OK) {
    if (err && err->code == BL_ESPEC)
      snprintf (err->where, sizeof err->where, "%s", where);
    return err ? err->code : BL_ESPEC;
  }
  if (dup_into (&j->candidates, v) != BL_OK)
    NOMEM ();
  return BL_OK;
}

/* ------------------------------------------------------------------ the table */

#define F(member) offsetof (bl_job, member)
#define CLI BL_OPTION_CLI
#define MODEL BL_OPTION_MODEL
#define METHOD BL_OPTION_METHOD
#define CAND BL_OPTION_CANDIDATE
#define VALUE BL_OPTION_VALUE
#define FLAG BL_OPTION_FLAG
#define EST BL_OPTION_ESTIMATES

/* In the order of --help.  The help texts are printed as they stand, after "  --KEY ARG"
   padded to column 26 (cli/model_opts.c). */
static const bl_option table[] = {
  { "data", VALUE, 0, set_string, F (data), NULL, NULL, NULL },
  { "response", VALUE, CLI, set_string, F (response), "model", "COL",
    "the response column (required)" },
  { "terms", VALUE, CLI, set_string, F (terms), "model", "TERMS",
    "comma-separated terms: a column, log(t), sqrt(t), exp(t),\n"
    "pow(t, k), cross(t1, t2); names with spaces in [brackets]" },
  { "no-intercept", FLAG, CLI, set_flag_not, F (intercept), "model", NULL,
    "leave out the intercept column" },
  { "method", VALUE, CLI | MODEL | METHOD | CAND, set_method, 0, "model", "glm|ols|wls",
    "glm (default): maximum likelihood by IRLS; ols: the gaussian\n"
    "family with the identity link; wls: weighted least squares\n"
    "with --weights and/or --variance" },
  { "family", VALUE, CLI | MODEL | METHOD | CAND, set_family, 0, "model", "NAME",
    "gaussian (default), poisson, gamma, inverse-gaussian,\n"
    "negative-binomial (Var = mu + mu^2/theta), tweedie\n"
    "(compound poisson-gamma, Var = phi mu^p, 1 < p < 2)" },
  { "theta", VALUE, CLI | MODEL, set_theta, 0, "model", "T",
    "negative binomial: fix theta (default: estimated)" },
  { "power", VALUE, CLI | MODEL, set_power, 0, "model", "P|est",
    "tweedie: the power p (default: est, by profile likelihood)" },
  { "link", VALUE, CLI | MODEL | METHOD | CAND, set_link, 0, "model", "NAME",
    "identity, log, inverse, sqrt; default: the canonical link\n"
    "(identity, log, inverse), but log for inverse-gaussian, whose\n"
    "canonical link 1/mu^2 is not offered, and log for the\n"
    "negative binomial and tweedie" },
  { "variance", VALUE, CLI | MODEL | METHOD | CAND, set_variance, 0, "model", "EXPR",
    "wls variance function: COL^K (proportional to a positive\n"
    "column to the power K) or fitted^K (to the fitted mean);\n"
    "K a number or 'est' (maximum likelihood)" },
  { "transform", VALUE, CLI | MODEL | METHOD | CAND, set_transform, 0, "model", "NAME",
    "ordinary least squares of log(y), sqrt(y), or a Box-Cox\n"
    "power: boxcox (estimated) or boxcox=L; reported on y's scale" },
  { "shift", VALUE, CLI | MODEL | CAND, set_shift, 0, "model", "C",
    "transform y + C (for y <= 0; results depend on C)" },
  { "weights", VALUE, CLI, set_string, F (weights), "model", "COL",
    "prior weights (each > 0)" },
  { "offset", VALUE, CLI, set_string, F (offset), "model", "TERM",
    "a term added with coefficient 1, e.g. log(hours) for exposure" },
  { "categorical", VALUE, CLI, set_categorical, 0, "model", "A,B",
    "treat these columns as categorical" },
  { "reference", VALUE, CLI, set_reference, 0, "model", "COL=LEVEL",
    "reference level of a categorical column (repeatable);\n"
    "default: the first level in byte order" },
  { "dispersion", VALUE, CLI | MODEL | CAND | EST, set_dispersion, 0, "model", "KIND",
    "model (default) or pearson (poisson: scale the standard\n"
    "errors by the Pearson estimate)" },
  { "level", VALUE, CLI | EST, set_level, 0, "model", "X",
    "confidence level of the intervals (default 0.95)" },
  { "against", VALUE, CLI | MODEL, set_string, F (against), "model", "TERMS",
    "fit, diagnose: test against the smaller model with these\n"
    "terms, nested in --terms\n"
    "(likelihood ratio: chi-square, or F when phi is estimated)" },
  { "se", VALUE, CLI | EST, set_se, 0, "model", "KIND",
    "standard errors: model (default), hc0, hc1, hc2, hc3\n"
    "(heteroscedasticity-consistent sandwich), cluster" },
  { "cluster", VALUE, CLI | EST, set_string, F (cluster), "model", "COL",
    "with --se cluster: the column naming each row's cluster" },
  { "delimiter", VALUE, CLI, set_delimiter, 0, "input", "C",
    "field delimiter (default ',', or tab for .tsv names)" },
  { "decimal-comma", FLAG, CLI, set_flag, F (table.decimal_comma), "input", NULL,
    "numbers are written 3,14" },
  { "max-iter", VALUE, CLI, set_max_iter, 0, "numerics", "N",
    "IRLS iteration limit, every step counted (default 50)" },
  { "epsilon", VALUE, CLI, set_epsilon, 0, "numerics", "X",
    "convergence: |D_old - D| <= X (|D| + 0.1) and coefficient\n"
    "steps <= X/10 (|b| + se) (default 1e-10)" },
  { "solver", VALUE, CLI, set_solver, 0, "numerics", "KIND",
    "auto (default), extended, streamed" },
  { "threads", VALUE, CLI, set_threads, 0, "numerics", "N",
    "worker threads, 1 or 2 (default 2)" },
  { "candidates", VALUE, 0, set_candidates, 0, NULL, NULL, NULL },
  { "folds", VALUE, 0, set_folds, 0, NULL, NULL, NULL },
  { "seed", VALUE, 0, set_seed, 0, NULL, NULL, NULL }
};

#define NOPTIONS (sizeof table / sizeof table[0])

size_t
bl_option_count (void)
{
  return NOPTIONS;
}

const bl_option *
bl_option_at (size_t i)
{
  return i < NOPTIONS ? &table[i] : NULL;
}

const bl_option *
bl_option_find (const char *key)
{
  for (size_t i = 0; key && i < NOPTIONS; i++)
    if (strcmp (key, table[i].key) == 0)
      return &table[i];
  return NULL;
}

size_t
bl_option_index (const bl_option *o)
{
  return (size_t) (o - table);
}
