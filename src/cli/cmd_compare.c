/* cmd_compare.c -- 'ballast compare DATA': every variance treatment on the same rows,
   ranked on y's likelihood scale. */
#include <errno.h>
#include <getopt.h>
#include <stdio.h>
#include <string.h>
#include "ballast.h"
#include "cli.h"
#include "job.h"
#include "model_opts.h"

static const char usage_head[] =
  "usage: ballast compare DATA --response COL [--terms TERMS] [OPTION]...\n"
  "\n"
  "Fit every candidate variance treatment to the same rows of DATA -- least squares plain\n"
  "and on log, sqrt and Box-Cox scales, weighted least squares with Var = sigma^2 mu^K, and\n"
  "gaussian, poisson, gamma and inverse gaussian GLMs -- and rank them by AIC on the\n"
  "original response's scale (by the discretized likelihood for integer-valued y), with\n"
  "cross-validated prediction errors, each candidate's residual spread, and advice.\n"
  "\n"
  "candidates:\n"
  "  --candidates LIST       comma-separated ids (default:\n"
  "                          " BL_COMPARE_DEFAULT ");\n"
  "                          ls-bc=L fixes the Box-Cox power at L\n"
  "  --folds N               cross-validation folds (default 10; 0 for none)\n"
  "  --seed N                seed of the folds, the null quantiles and the randomized\n"
  "                          quantile residuals (default 20261201)\n"
  "\n";
static const char usage_tail[] =
  "\n"
  "(--method, --family, --link, --variance, --transform, --shift, --dispersion, --theta and\n"
  "--power are chosen by the candidates; --against, --level, --se and --cluster apply to\n"
  "one model: 'ballast fit'.)\n"
  "\n"
  "output:\n"
  "  --json                  one JSON document instead of the text report\n"
  "  -o, --output FILE       write the report to FILE (atomically) instead of stdout\n"
  "  -q, --quiet             no warnings on stderr\n"
  "  -h, --help              this help\n"
  "\n"
  "exit status: 0 done (even when some candidates fail: they stay in the table with the\n"
  "reason); 1 data problem or no candidate could be fitted; 2 usage or syntax error.\n";

enum { OPT_JSON = OPT_FIRST_OWN, OPT_CANDIDATES, OPT_FOLDS, OPT_SEED };

/* The command's own long options; the shared ones come from the option table. */
static const struct option own_opts[] = {
  { "json", no_argument, NULL, OPT_JSON },
  { "candidates", required_argument, NULL, OPT_CANDIDATES },
  { "folds", required_argument, NULL, OPT_FOLDS },
  { "seed", required_argument, NULL, OPT_SEED },
  CLI_OUTPUT_OPTS
};

/* A whole non-negative integer (0 allowed); 0 on success. */
static int
parse_count (const char *s, size_t *out)
{
  if (strcmp (s, "0") == 0) {
    *out = 0;
    return 0;
  }
  return cli_parse_size (s, out);
}

/* Compare M's candidates (the folds, null points and quantile residuals drawn with SEED),
   print the warnings and write the report: the exit code. */
static int
compare_report (const cli_model *m, unsigned long seed, int json, int quiet,
                const char *output)
{
  bl_job_result *res = NULL;
  const bl_compare *cmp;
  bl_err err;
  cli_out out;
  int st, rc = EXIT_DATA;
  if (cli_model_run (m, BL_JOB_COMPARE, seed, NULL, NULL, &res, &err) != BL_OK) {
    rc = cli_lib_error ("compare", &err);
    goto done;
  }
  cmp = bl_job_result_compare (res);
  if (!quiet)
    cli_model_warn_drops (m);
  if (cli_out_open (&out, output) != 0)
    goto done;
  {
    const bl_report_info info = { m->job.data, m->terms, m->offset, m->job.weights,
                                  bl_version (), NULL, NULL };
    st = json ? bl_report_compare_json (out.f, cmp, m->design, &info, &err)
              : bl_report_compare_text (out.f, cmp, m->design, &info, &err);
  }
  if (st != BL_OK) {
    rc = cli_out_fail (&out, "compare", &err, errno);
  } else if (cli_out_commit (&out) == 0) {
    if (bl_compare_winner (cmp) < 0)
      cli_error ("compare", "no candidate could be fitted");
    else
      rc = EXIT_DONE;
  }
done:
  bl_job_result_free (res);
  return rc;
}

int
cmd_compare (int argc, char **argv)
{
  const char *output = NULL;
  int json = 0, quiet = 0, c, rc, li = -1;
  const char *folds_text = NULL;
  size_t folds = BL_COMPARE_FOLDS, seed = BL_COMPARE_SEED;
  cli_model m;
  bl_compare_opts copt;
  bl_err err;

  cli_model_init (&m);
  bl_compare_opts_init (&copt);
  bl_err_clear (&err);
  optind = 1;
  opterr = 0;
  struct option long_opts[CLI_LONG_OPTS_MAX];
  cli_model_long_opts (long_opts, own_opts);
  while ((c = getopt_long (argc, argv, ":o:qh", long_opts, &li)) != -1) {
    int r;
    if (cli_model_option_has (c, BL_OPTION_MODEL)
        || cli_model_option_has (c, BL_OPTION_ESTIMATES)) {
      char where[64];
      snprintf (where, sizeof where, "--%s", long_opts[li].name);
      rc = cli_usage_error ("compare", where, "%s", cli_model_option_has (c, BL_OPTION_MODEL)
                            ? "compare fits its candidates' own models: choose them with "
                            "--candidates" : "compare reports no coefficients: this option "
                            "applies to 'ballast fit'");
      goto done;
    }
    r = cli_model_option (&m, c, optarg, "compare");
    if (r > 0) {
      rc = r;
      goto done;
    }
    if (r == 0)
      continue;
    switch (c) {
    case OPT_JSON: json = 1; break;
    case OPT_CANDIDATES:
      if (bl_compare_check_list (optarg, &err) != BL_OK) {
        rc = cli_lib_error ("compare", &err);
        goto done;
      }
      copt.candidates = optarg;
      break;
    case OPT_FOLDS:
      if (parse_count (optarg, &folds) != 0 || folds == 1) {
        rc = cli_usage_error ("compare", "--folds", "expected 0 or an integer >= 2, got "
                              "'%s'", optarg);
        goto done;
      }
      folds_text = optarg;
      break;
    case OPT_SEED:
      if (parse_count (optarg, &seed) != 0) {
        rc = cli_usage_error ("compare", "--seed", "expected a non-negative integer, got "
                              "'%s'", optarg);
        goto done;
      }
      break;
    case 'o': output = optarg; break;
    case 'q': quiet = 1; break;
    default:
      rc = cli_model_option_end (&m, c, "compare", argv, usage_head, usage_tail);
      goto done;
    }
  }
  if ((rc = cli_model_finish (&m, argc, argv, optind, "compare")) != 0)
    goto done;
  {                   /* no output replaces the data, before any work */
    const cli_path paths[] = { { "DATA", m.job.data, 0 },
                               { output ? "--output" : "the report", output ? output : "-", 1 } };
    if ((rc = cli_paths_check ("compare", paths, sizeof paths / sizeof paths[0])) != 0)
      goto done;
  }
  if ((rc = cli_model_load (&m, "compare")) != 0)
    goto done;
  /* the comparison's settings into the job, which the runner reads */
  m.job.folds = folds;
  if (folds_text                 /* through the key table, which records it as given */
      && bl_job_set (&m.job, "folds", folds_text, "--folds", &err) != BL_OK)
    rc = cli_lib_error ("compare", &err);
  else if (copt.candidates
      && bl_job_set (&m.job, "candidates", copt.candidates, "--candidates", &err) != BL_OK)
    rc = cli_lib_error ("compare", &err);
  else
    rc = compare_report (&m, (unsigned long) seed, json, quiet, output);
done:
  cli_model_free (&m);
  return rc;
}
