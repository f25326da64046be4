/* model_opts.c -- the options every modelling subcommand shares. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "cli.h"
#include "model_opts.h"

#define MAX_LIST CLI_MAX_LIST

const char cli_model_help[] =
  "model:\n"
  "  --response COL          the response column (required)\n"
  "  --terms TERMS           comma-separated terms: a column, log(t), sqrt(t), exp(t),\n"
  "                          pow(t, k), cross(t1, t2); names with spaces in [brackets]\n"
  "  --no-intercept          leave out the intercept column\n"
  "  --method glm|ols|wls    glm (default): maximum likelihood by IRLS; ols: the gaussian\n"
  "                          family with the identity link; wls: weighted least squares\n"
  "                          with --weights and/or --variance\n"
  "  --family NAME           gaussian (default), poisson, gamma, inverse-gaussian\n"
  "  --link NAME             identity, log, inverse; default: the canonical link (identity,\n"
  "                          log, inverse), but log for inverse-gaussian, whose canonical\n"
  "                          link 1/mu^2 is not offered\n"
  "  --variance EXPR         wls variance function: COL^K (proportional to a positive\n"
  "                          column to the power K) or fitted^K (to the fitted mean);\n"
  "                          K a number or 'est' (maximum likelihood)\n"
  "  --transform NAME        ordinary least squares of log(y), sqrt(y), or a Box-Cox\n"
  "                          power: boxcox (estimated) or boxcox=L; reported on y's scale\n"
  "  --shift C               transform y + C (for y <= 0; results depend on C)\n"
  "  --weights COL           prior weights (each > 0)\n"
  "  --offset TERM           a term added with coefficient 1, e.g. log(hours) for exposure\n"
  "  --categorical A,B       treat these columns as categorical\n"
  "  --reference COL=LEVEL   reference level of a categorical column (repeatable);\n"
  "                          default: the first level in byte order\n"
  "  --dispersion KIND       model (default) or pearson (poisson: scale the standard\n"
  "                          errors by the Pearson estimate)\n"
  "  --level X               confidence level of the intervals (default 0.95)\n"
  "  --se KIND               standard errors: model (default), hc0, hc1, hc2, hc3\n"
  "                          (heteroscedasticity-consistent sandwich)\n"
  "\n"
  "input:\n"
  "  --delimiter C           field delimiter (default ',', or tab for .tsv names)\n"
  "  --decimal-comma         numbers are written 3,14\n"
  "\n"
  "numerics:\n"
  "  --max-iter N            IRLS iteration limit (default 50)\n"
  "  --epsilon X             convergence: |D_old - D| <= X (|D| + 0.1) (default 1e-10)\n"
  "  --solver KIND           auto (default), extended, streamed\n"
  "  --threads N             worker threads, 1 or 2 (default 2)\n";

/* Split a comma-separated list in place into LIST (at most MAX_LIST); -1 when too long or an
   entry is empty. */
static int
split_list (char *s, const char **list, size_t *n)
{
  for (char *tok = s;;) {
    char *const comma = strchr (tok, ',');
    if (comma)
      *comma = '\0';
    while (*tok == ' ')
      tok++;
    for (char *e = tok + strlen (tok); e > tok && e[-1] == ' ';)
      *--e = '\0';
    if (!*tok || *n >= MAX_LIST)
      return -1;
    list[(*n)++] = tok;
    if (!comma)
      return 0;
    tok = comma + 1;
  }
}

/* --variance COL^K | fitted^K, K a number or 'est'.  COL may be written in brackets.  Fills
   FO and *COL (pointing into BUF, a copy of TEXT); 0, or -1 for a malformed expression. */
static int
parse_variance (const char *text, char *buf, size_t cap, bl_fit_opts *fo, const char **col)
{
  char *hat;
  if (strlen (text) >= cap)
    return -1;
  strcpy (buf, text);
  hat = strrchr (buf, '^');
  if (!hat || hat == buf || hat[1] == '\0')
    return -1;
  *hat = '\0';
  if (strcmp (hat + 1, "est") == 0)
    fo->power_est = 1;
  else if (cli_parse_double (hat + 1, &fo->power) != 0)
    return -1;
  if (strcmp (buf, "fitted") == 0) {
    fo->variance = BL_VARIANCE_FITTED;
    *col = NULL;
    return 0;
  }
  if (buf[0] == '[') {
    const size_t len = strlen (buf);
    if (len < 3 || buf[len - 1] != ']')
      return -1;
    buf[len - 1] = '\0';
    memmove (buf, buf + 1, len - 1);
  }
  fo->variance = BL_VARIANCE_COLUMN;
  *col = buf;
  return 0;
}

void
cli_model_init (cli_model *m)
{
  memset (m, 0, sizeof *m);
  m->intercept = 1;
  bl_fit_opts_init (&m->fo);
  bl_table_opts_init (&m->to);
  m->fo.irls.cancel = &cli_cancel;
  m->to.cancel = &cli_cancel;
}

void
cli_model_free (cli_model *m)
{
  bl_design_free (m->design);
  bl_table_free (m->table);
  bl_terms_free (m->terms);
  bl_terms_free (m->offset);
  free (m->catbuf);
  m->design = NULL;
  m->table = NULL;
  m->terms = m->offset = NULL;
  m->catbuf = NULL;
}

int
cli_model_option (cli_model *m, int c, const char *arg, const char *cmd)
{
  switch (c) {
    case OPT_RESPONSE: m->response = arg; return 0;
    case OPT_TERMS: m->terms_text = arg; return 0;
    case OPT_NO_INTERCEPT: m->intercept = 0; return 0;
    case OPT_METHOD:
      m->method_given = 1;
      if (strcmp (arg, "glm") == 0)
        m->fo.method = BL_METHOD_GLM;
      else if (strcmp (arg, "ols") == 0)
        m->fo.method = BL_METHOD_OLS;
      else if (strcmp (arg, "wls") == 0)
        m->fo.method = BL_METHOD_WLS;
      else {
        return cli_usage_error (cmd, "--method", "unknown method '%s' (expected glm, ols or "
                                "wls)", arg);
      }
      return 0;
    case OPT_VARIANCE:
      if (parse_variance (arg, m->varbuf, sizeof m->varbuf, &m->fo, &m->varcol) != 0) {
        return cli_usage_error (cmd, "--variance", "expected COL^K or fitted^K with K a "
                                "number or 'est', got '%s'", arg);
      }
      return 0;
    case OPT_TRANSFORM:
      m->fo.lambda_est = 0;
      if (strcmp (arg, "log") == 0)
        m->fo.transform = BL_TRANSFORM_LOG;
      else if (strcmp (arg, "sqrt") == 0)
        m->fo.transform = BL_TRANSFORM_SQRT;
      else if (strcmp (arg, "boxcox") == 0) {
        m->fo.transform = BL_TRANSFORM_BOXCOX;
        m->fo.lambda_est = 1;
      } else if (strncmp (arg, "boxcox=", 7) == 0
                 && cli_parse_double (arg + 7, &m->fo.lambda) == 0) {
        m->fo.transform = BL_TRANSFORM_BOXCOX;
      } else {
        return cli_usage_error (cmd, "--transform", "expected log, sqrt, boxcox or "
                                "boxcox=L, got '%s'", arg);
      }
      return 0;
    case OPT_SHIFT:
      if (cli_parse_double (arg, &m->fo.shift) != 0) {
        return cli_usage_error (cmd, "--shift", "expected a number, got '%s'", arg);
      }
      m->fo.shift_given = 1;
      return 0;
    case OPT_SE:
      if (strcmp (arg, "model") == 0)
        m->fo.se = BL_SE_MODEL;
      else if (strcmp (arg, "hc0") == 0)
        m->fo.se = BL_SE_HC0;
      else if (strcmp (arg, "hc1") == 0)
        m->fo.se = BL_SE_HC1;
      else if (strcmp (arg, "hc2") == 0)
        m->fo.se = BL_SE_HC2;
      else if (strcmp (arg, "hc3") == 0)
        m->fo.se = BL_SE_HC3;
      else {
        return cli_usage_error (cmd, "--se", "expected model, hc0, hc1, hc2 or hc3, got "
                                "'%s'", arg);
      }
      return 0;
    case OPT_FAMILY:
      if (!(m->fo.fam = bl_family_find (arg)))
        return cli_usage_error (cmd, "--family", "unknown family '%s' (expected gaussian, "
                                "poisson, gamma or inverse-gaussian)", arg);
      return 0;
    case OPT_LINK:
      if (!(m->fo.link = bl_link_find (arg)))
        return cli_usage_error (cmd, "--link", "unknown link '%s' (expected identity, log "
                                "or inverse)", arg);
      return 0;
    case OPT_WEIGHTS: m->weights = arg; return 0;
    case OPT_OFFSET: m->offset_text = arg; return 0;
    case OPT_CATEGORICAL:
      free (m->catbuf);
      m->catbuf = strdup (arg);
      m->ncat = 0;
      if (!m->catbuf || split_list (m->catbuf, m->categorical, &m->ncat) != 0) {
        return cli_usage_error (cmd, "--categorical", "expected a comma-separated list of "
                                "column names, got '%s'", arg);
      }
      return 0;
    case OPT_REFERENCE:
      if (m->nref >= MAX_LIST || !strchr (arg, '=')) {
        return cli_usage_error (cmd, "--reference", "expected COL=LEVEL, got '%s'", arg);
      }
      m->reference[m->nref++] = arg;
      return 0;
    case OPT_DISPERSION:
      if (strcmp (arg, "pearson") == 0)
        m->fo.dispersion_pearson = 1;
      else if (strcmp (arg, "model") == 0)
        m->fo.dispersion_pearson = 0;
      else {
        return cli_usage_error (cmd, "--dispersion", "expected model or pearson, got '%s'",
                                arg);
      }
      return 0;
    case OPT_LEVEL:
      if (cli_parse_double (arg, &m->fo.level) != 0 || !(m->fo.level > 0.0 && m->fo.level < 1.0)) {
        return cli_usage_error (cmd, "--level", "expected a number between 0 and 1, got "
                                "'%s'", arg);
      }
      return 0;
    case OPT_DELIMITER:
      if (strcmp (arg, "\\t") == 0 || strcmp (arg, "tab") == 0)
        m->to.delimiter = '\t';
      else if (strlen (arg) == 1 && arg[0] != '"' && arg[0] != '\n'
               && arg[0] != '\r')
        m->to.delimiter = arg[0];
      else {
        return cli_usage_error (cmd, "--delimiter", "expected one character (or 'tab'), "
                                "got '%s'", arg);
      }
      return 0;
    case OPT_DECIMAL_COMMA: m->to.decimal_comma = 1; return 0;
    case OPT_MAX_ITER:
      if (cli_parse_size (arg, &m->fo.irls.max_iter) != 0) {
        return cli_usage_error (cmd, "--max-iter", "expected a positive integer, got '%s'",
                                arg);
      }
      return 0;
    case OPT_EPSILON:
      if (cli_parse_double (arg, &m->fo.irls.epsrel) != 0 || !(m->fo.irls.epsrel > 0.0)) {
        return cli_usage_error (cmd, "--epsilon", "expected a positive number, got '%s'",
                                arg);
      }
      return 0;
    case OPT_SOLVER:
      if (strcmp (arg, "auto") == 0)
        m->fo.irls.solver = BL_SOLVER_AUTO;
      else if (strcmp (arg, "extended") == 0)
        m->fo.irls.solver = BL_SOLVER_EXTENDED;
      else if (strcmp (arg, "streamed") == 0)
        m->fo.irls.solver = BL_SOLVER_STREAMED;
      else {
        return cli_usage_error (cmd, "--solver", "expected auto, extended or streamed, got "
                                "'%s'", arg);
      }
      return 0;
    case OPT_THREADS: {
      size_t t;
      if (cli_parse_size (arg, &t) != 0 || t > 2) {
        return cli_usage_error (cmd, "--threads", "expected 1 or 2, got '%s'", arg);
      }
      m->fo.irls.threads = (unsigned) t;
      return 0;
    }
  default:
    return -1;
  }
}

int
cli_model_finish (cli_model *m, int argc, char **argv, int optind_, const char *cmd)
{
  if (optind_ >= argc)
    return cli_usage_error (cmd, NULL, "no DATA file given");
  if (argc - optind_ > 1)
    return cli_usage_error (cmd, argv[optind_ + 1], "only one DATA file is taken");
  m->data = argv[optind_];
  if (!m->response)
    return cli_usage_error (cmd, "--response", "the response column is required");
  if (m->fo.variance != BL_VARIANCE_NONE) {
    if (m->method_given && m->fo.method != BL_METHOD_WLS)
      return cli_usage_error (cmd, "--variance", "a variance function needs --method wls");
    m->fo.method = BL_METHOD_WLS;
    m->fo.variance_col = m->varcol;
  }
  if (m->fo.method == BL_METHOD_WLS && m->fo.variance == BL_VARIANCE_NONE && !m->weights)
    return cli_usage_error (cmd, "--method", "wls needs --weights COL or --variance EXPR");
  if (m->fo.shift_given && m->fo.transform == BL_TRANSFORM_NONE)
    return cli_usage_error (cmd, "--shift", "a shift applies only with --transform");
  if (m->fo.transform != BL_TRANSFORM_NONE && !m->method_given)
    m->fo.method = BL_METHOD_OLS;
  if (m->fo.method == BL_METHOD_OLS && m->fo.fam == NULL)
    m->fo.fam = &bl_family_gaussian;
  return 0;
}

int
cli_model_load (cli_model *m, const char *cmd)
{
  bl_err err;
  bl_design_opts dopt;
  bl_err_clear (&err);
  /* Syntax first, before any work. */
  if (m->terms_text && !(m->terms = bl_terms_parse (m->terms_text, "--terms", &err)))
    return cli_lib_error (cmd, &err);
  if (m->offset_text) {
    if (!(m->offset = bl_terms_parse (m->offset_text, "--offset", &err)))
      return cli_lib_error (cmd, &err);
    if (bl_terms_count (m->offset) != 1) {
      bl_fail (&err, BL_ESPEC, "--offset", "expected one term, got %zu",
               bl_terms_count (m->offset));
      return cli_lib_error (cmd, &err);
    }
  }
  m->to.categorical = m->categorical;
  m->to.n_categorical = m->ncat;
  if (!(m->table = bl_table_read (m->data, &m->to, &err)))
    return cli_lib_error (cmd, &err);
  bl_design_opts_init (&dopt);
  dopt.intercept = m->intercept;
  dopt.reference = m->reference;
  dopt.n_reference = m->nref;
  dopt.weights = m->weights;
  dopt.offset = m->offset;
  dopt.variance = m->varcol;
  if (!(m->design = bl_design_new (m->table, m->response, m->terms, &dopt, &err)))
    return cli_lib_error (cmd, &err);
  return 0;
}

void
cli_model_warn_drops (const cli_model *m)
{
  for (size_t i = 0; i < bl_design_ndrop (m->design); i++) {
    size_t n;
    const char *r = bl_design_drop_reason (m->design, i, &n);
    cli_warn (m->data, "%zu row%s set aside (%s)", n, n == 1 ? "" : "s", r);
  }
}
