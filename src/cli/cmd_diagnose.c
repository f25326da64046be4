/* cmd_diagnose.c -- 'ballast diagnose DATA': fit (OLS unless the fit options say otherwise)
   and check whether the spread is constant. */
#include <errno.h>
#include <getopt.h>
#include <stdio.h>
#include <string.h>
#include "ballast.h"
#include "cli.h"
#include "job.h"
#include "model_opts.h"

static const char usage_head[] =
  "usage: ballast diagnose DATA --response COL [--terms TERMS] [OPTION]...\n"
  "\n"
  "Fit a model (ordinary least squares unless the model options choose another) and check\n"
  "whether its residual spread is constant: a lack-of-fit check first, the Breusch-Pagan,\n"
  "Koenker and White tests, the spread ratio across groups by fitted value with its 95%\n"
  "point under constant variance, and the power K in Var y = c mu^K with the family it\n"
  "suggests.\n"
  "\n";
static const char usage_tail[] =
  "\n"
  "(--level, --se, --cluster and --dispersion change only the coefficient table, which\n"
  "diagnose does not report: they are refused; see 'ballast fit'.)\n"
  "\n"
  "output:\n"
  "  --residuals FILE.csv    also write the residual table (response, Pearson, deviance,\n"
  "                          working and quantile residuals, leverage, Cook's distance)\n"
  "  --by COL                also test equal spread across the levels of the categorical\n"
  "                          column COL (Brown-Forsythe), with each level's spread\n"
  "  --seed N                seed of the simulated null quantile and of the randomized\n"
  "                          quantile residuals (default 20261201)\n"
  "  --json                  one JSON document instead of the text report\n"
  "  -o, --output FILE       write the report to FILE (atomically) instead of stdout\n"
  "  -q, --quiet             no warnings on stderr\n"
  "  -h, --help              this help\n"
  "\n"
  "exit status: 0 done; 1 data or model problem; 2 usage, option or term-syntax error;\n"
  "130 interrupted (nothing written).\n";

enum { OPT_JSON = OPT_FIRST_OWN, OPT_RESIDUALS, OPT_SEED, OPT_BY };

/* The command's own long options; the shared ones come from the option table. */
static const struct option own_opts[] = {
  { "json", no_argument, NULL, OPT_JSON },
  { "residuals", required_argument, NULL, OPT_RESIDUALS },
  { "seed", required_argument, NULL, OPT_SEED },
  { "by", required_argument, NULL, OPT_BY },
  CLI_OUTPUT_OPTS
};

/* Write the residual table of RES's model to ROUT, opened on PATH and left uncommitted (the
   caller commits it with the report): 0, or the exit code with ROUT aborted. */
static int
write_residuals (const bl_job_result *res, const char *path, cli_out *rout)
{
  bl_resid_table *t;
  bl_err err;
  int rc = EXIT_DATA;
  bl_err_clear (&err);
  t = bl_job_resid_table (res, &cli_cancel, &err);
  if (!t || cli_cancel) {
    rc = t ? cli_interrupted ("diagnose") : cli_lib_error ("diagnose", &err);
    goto done;
  }
  if (cli_out_open (rout, path) != 0)
    goto done;
  if (bl_report_residuals_csv (rout->f, bl_job_result_model (res), t, &cli_cancel, &err)
      != BL_OK) {
    rc = cli_out_fail (rout, "diagnose", &err, errno);
    goto done;
  }
  rc = 0;
done:
  bl_resid_table_free (t);
  return rc;
}

/* Fit M's model and check it (the null quantile and the quantile residuals drawn with SEED;
   the spread by group of column BY when given), print its warnings, write the residual table
   to RESIDUALS when given and the report: the exit code. */
static int
diagnose_report (const cli_model *m, unsigned long seed, const char *by, const char *residuals,
                 int json, int quiet, const char *output)
{
  bl_job_result *res = NULL;
  const bl_fit *fit;
  bl_err err;
  cli_out out, rout;
  int st, rc = EXIT_DATA, have_rout = 0;
  st = cli_model_run (m, BL_JOB_DIAGNOSE, seed, by, NULL, &res, &err);
  fit = res ? bl_job_result_fit (res) : NULL;
  if (!fit || !bl_job_result_diag (res)) {
    if (cli_cancel)                /* a cancelled fit or diagnosis: no report of it */
      rc = cli_interrupted ("diagnose");
    else if (fit && !bl_fit_stats_get (fit)->converged)
      cli_error ("diagnose", "%s", bl_fit_status (fit)->msg);
    else
      rc = cli_lib_error ("diagnose", &err);
    goto done;
  }
  if (!quiet) {
    const bl_warnings *wn = bl_fit_warnings (fit);
    cli_model_warn_drops (m);
    for (size_t i = 0; i < wn->n; i++)
      cli_warn ("diagnose", "%s", wn->msg[i]);
  }
  if (st != BL_OK) {               /* the spread by group (--by) */
    rc = cli_lib_error ("diagnose", &err);
    goto done;
  }
  if (residuals) {
    if ((rc = write_residuals (res, residuals, &rout)) != 0)
      goto done;
    have_rout = 1;
    rc = EXIT_DATA;
  }
  if (cli_out_open (&out, output) != 0) {
    if (have_rout)
      cli_out_abort (&rout);
    goto done;
  }
  {
    const bl_report_info info = { m->job.data, m->terms, m->offset, m->job.weights,
                                  bl_version (), bl_job_result_nested (res),
                                  bl_job_result_by (res) };
    st = json ? bl_report_diag_json (out.f, fit, bl_job_result_diag (res), &info, &err)
              : bl_report_diag_text (out.f, fit, bl_job_result_diag (res), &info, &err);
  }
  if (st != BL_OK) {
    rc = cli_out_fail (&out, "diagnose", &err, errno);
    if (have_rout)
      cli_out_abort (&rout);
  } else {
    /* the residual table and the report land together, or neither does */
    cli_out *const both[] = { &rout, &out };
    if (have_rout ? cli_out_commit_all (both, 2) == 0 : cli_out_commit (&out) == 0)
      rc = EXIT_DONE;
  }
done:
  bl_job_result_free (res);
  return rc;
}

int
cmd_diagnose (int argc, char **argv)
{
  const char *output = NULL, *residuals = NULL, *by = NULL;
  int json = 0, quiet = 0, c, rc, method_set = 0;
  size_t seed = BL_DIAG_SEED;
  cli_model m;

  cli_model_init (&m);
  optind = 1;
  opterr = 0;
  struct option long_opts[CLI_LONG_OPTS_MAX];
  cli_model_long_opts (long_opts, own_opts);
  while ((c = getopt_long (argc, argv, ":o:qh", long_opts, NULL)) != -1) {
    int r;
    if (cli_model_option_has (c, BL_OPTION_ESTIMATES)) {
      char where[64];
      snprintf (where, sizeof where, "--%s", bl_job_key_name ((size_t) (c - CLI_OPT_BASE)));
      rc = cli_usage_error ("diagnose", where, "diagnose reports no coefficients: this "
                            "option applies to 'ballast fit'");
      goto done;
    }
    r = cli_model_option (&m, c, optarg, "diagnose");
    if (r > 0) {
      rc = r;
      goto done;
    }
    if (r == 0) {
      method_set |= cli_model_option_has (c, BL_OPTION_METHOD);
      continue;
    }
    switch (c) {
    case OPT_JSON: json = 1; break;
    case OPT_RESIDUALS: residuals = optarg; break;
    case OPT_BY: by = optarg; break;
    case OPT_SEED:
      if (cli_parse_size (optarg, &seed) != 0 && strcmp (optarg, "0") != 0) {
        rc = cli_usage_error ("diagnose", "--seed", "expected a non-negative integer, got "
                              "'%s'", optarg);
        goto done;
      }
      if (strcmp (optarg, "0") == 0)
        seed = 0;
      break;
    case 'o': output = optarg; break;
    case 'q': quiet = 1; break;
    default:
      rc = cli_model_option_end (&m, c, "diagnose", argv, usage_head, usage_tail);
      goto done;
    }
  }
  if (!method_set)
    m.job.fit.method = BL_METHOD_OLS;
  if ((rc = cli_model_finish (&m, argc, argv, optind, "diagnose")) != 0)
    goto done;
  {                   /* no output replaces the data or another output, before any work */
    const cli_path paths[] = { { "DATA", m.job.data, 0 },
                               { output ? "--output" : "the report", output ? output : "-", 1 },
                               { "--residuals", residuals, 1 } };
    if ((rc = cli_paths_check ("diagnose", paths, sizeof paths / sizeof paths[0])) != 0)
      goto done;
  }
  if ((rc = cli_model_load_with (&m, "diagnose", by)) != 0)
    goto done;
  rc = diagnose_report (&m, (unsigned long) seed, by, residuals, json, quiet, output);
done:
  cli_model_free (&m);
  return rc;
}
