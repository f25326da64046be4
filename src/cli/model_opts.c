/* model_opts.c -- the options every modelling subcommand shares. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "cli.h"
#include "model_opts.h"


const char cli_model_help[] =
  "model:\n"
  "  --response COL          the response column (required)\n"
  "  --terms TERMS           comma-separated terms: a column, log(t), sqrt(t), exp(t),\n"
  "                          pow(t, k), cross(t1, t2); names with spaces in [brackets]\n"
  "  --no-intercept          leave out the intercept column\n"
  "  --method glm|ols|wls    glm (default): maximum likelihood by IRLS; ols: the gaussian\n"
  "                          family with the identity link; wls: weighted least squares\n"
  "                          with --weights and/or --variance\n"
  "  --family NAME           gaussian (default), poisson, gamma, inverse-gaussian,\n"
  "                          negative-binomial (Var = mu + mu^2/theta), tweedie\n"
  "                          (compound poisson-gamma, Var = phi mu^p, 1 < p < 2)\n"
  "  --theta T               negative binomial: fix theta (default: estimated)\n"
  "  --power P|est           tweedie: the power p (default: est, by profile likelihood)\n"
  "  --link NAME             identity, log, inverse, sqrt; default: the canonical link\n"
  "                          (identity, log, inverse), but log for inverse-gaussian, whose\n"
  "                          canonical link 1/mu^2 is not offered, and log for the\n"
  "                          negative binomial and tweedie\n"
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
  "  --against TERMS         fit: test against the smaller model with these terms\n"
  "                          (likelihood ratio: chi-square, or F when phi is estimated)\n"
  "  --se KIND               standard errors: model (default), hc0, hc1, hc2, hc3\n"
  "                          (heteroscedasticity-consistent sandwich), cluster\n"
  "  --cluster COL           with --se cluster: the column naming each row's cluster\n"
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

/* The key of each shared option code (the long option's name). */
static const struct { int code; const char *key; } codes[] = {
  { OPT_RESPONSE, "response" }, { OPT_TERMS, "terms" }, { OPT_NO_INTERCEPT, "no-intercept" },
  { OPT_METHOD, "method" }, { OPT_FAMILY, "family" }, { OPT_LINK, "link" },
  { OPT_WEIGHTS, "weights" }, { OPT_OFFSET, "offset" }, { OPT_CATEGORICAL, "categorical" },
  { OPT_REFERENCE, "reference" }, { OPT_DISPERSION, "dispersion" }, { OPT_LEVEL, "level" },
  { OPT_DELIMITER, "delimiter" }, { OPT_DECIMAL_COMMA, "decimal-comma" },
  { OPT_MAX_ITER, "max-iter" }, { OPT_EPSILON, "epsilon" }, { OPT_SOLVER, "solver" },
  { OPT_THREADS, "threads" }, { OPT_VARIANCE, "variance" }, { OPT_TRANSFORM, "transform" },
  { OPT_SHIFT, "shift" }, { OPT_SE, "se" }, { OPT_THETA, "theta" }, { OPT_POWER, "power" },
  { OPT_AGAINST, "against" }, { OPT_CLUSTER, "cluster" }
};

void
cli_model_init (cli_model *m)
{
  memset (m, 0, sizeof *m);
  bl_job_init (&m->job);
  m->job.fit.irls.cancel = &cli_cancel;
  m->job.table.cancel = &cli_cancel;
}

void
cli_model_free (cli_model *m)
{
  bl_design_free (m->design);
  bl_table_free (m->table);
  bl_terms_free (m->terms);
  bl_terms_free (m->offset);
  bl_job_clear (&m->job);
  m->design = NULL;
  m->table = NULL;
  m->terms = m->offset = NULL;
}

int
cli_model_option (cli_model *m, int c, const char *arg, const char *cmd)
{
  for (size_t i = 0; i < sizeof codes / sizeof codes[0]; i++)
    if (codes[i].code == c) {
      char where[64];
      bl_err err;
      snprintf (where, sizeof where, "--%s", codes[i].key);
      if (bl_job_set (&m->job, codes[i].key, arg, where, &err) != BL_OK)
        return cli_lib_error (cmd, &err);
      return 0;
    }
  return -1;
}

int
cli_model_finish (cli_model *m, int argc, char **argv, int optind_, const char *cmd)
{
  bl_err err;
  if (optind_ >= argc)
    return cli_usage_error (cmd, NULL, "no DATA file given");
  if (argc - optind_ > 1)
    return cli_usage_error (cmd, argv[optind_ + 1], "only one DATA file is taken");
  if (bl_job_set (&m->job, "data", argv[optind_], "DATA", &err) != BL_OK
      || bl_job_finish (&m->job, 1, NULL, &err) != BL_OK)
    return cli_lib_error (cmd, &err);
  return 0;
}

int
cli_model_load (cli_model *m, const char *cmd)
{
  return cli_model_load_with (m, cmd, NULL);
}

int
cli_model_load_with (cli_model *m, const char *cmd, const char *also)
{
  bl_err err;
  bl_err_clear (&err);
  if (bl_job_parse_terms (&m->job, NULL, &m->terms, &m->offset, &err) != BL_OK
      || bl_job_load_with (&m->job, m->terms, m->offset, also, &m->table, &m->design, &err)
         != BL_OK)
    return cli_lib_error (cmd, &err);
  return 0;
}

int
cli_model_option_end (cli_model *m, int c, const char *cmd, char **argv, const char *head,
                      const char *tail)
{
  cli_model_free (m);
  switch (c) {
  case 'h':
    fputs (head, stdout);
    fputs (cli_model_help, stdout);
    fputs (tail, stdout);
    return EXIT_DONE;
  case ':':
    return cli_usage_error (cmd, argv[optind - 1], "this option needs a value");
  default:
    return cli_usage_error (cmd, argv[optind - 1], "unknown option");
  }
}

void
cli_model_warn_drops (const cli_model *m)
{
  for (size_t i = 0; i < bl_design_ndrop (m->design); i++) {
    size_t n;
    const char *r = bl_design_drop_reason (m->design, i, &n);
    cli_warn (m->job.data, "%zu row%s set aside (%s)", n, n == 1 ? "" : "s", r);
  }
}
