/* cmd_fit.c -- 'ballast fit DATA': read, build the design, fit one model, report it. */
#include <errno.h>
#include <getopt.h>
#include <stdio.h>
#include <string.h>
#include "ballast.h"
#include "cli.h"
#include "job.h"
#include "model.h"
#include "model_opts.h"

static const char usage_head[] =
  "usage: ballast fit DATA --response COL [--terms TERMS] [OPTION]...\n"
  "\n"
  "Fit one model to DATA (CSV or TSV, optionally gzip-compressed; '-' reads standard input)\n"
  "and report it as text, or as JSON with --json.\n"
  "\n";
static const char usage_tail[] =
  "\n"
  "output:\n"
  "  --json                  one JSON document instead of the text report\n"
  "  -o, --output FILE       write the report to FILE (atomically) instead of stdout\n"
  "  --save MODEL.json       also save the fitted model (atomically) for 'ballast predict'\n"
  "  -q, --quiet             no warnings on stderr\n"
  "  -h, --help              this help\n"
  "\n"
  "exit status: 0 done; 1 data or model problem (including no convergence);\n"
  "2 usage, option or term-syntax error; 130 interrupted (nothing written).\n";

enum { OPT_JSON = OPT_FIRST_OWN, OPT_SAVE };

/* The command's own long options; the shared ones come from the option table. */
static const struct option own_opts[] = {
  { "json", no_argument, NULL, OPT_JSON },
  { "save", required_argument, NULL, OPT_SAVE },
  CLI_OUTPUT_OPTS
};

/* Write the fitted model to SO, opened on SAVE and left uncommitted (committed with the
   report): 0, or EXIT_DATA with SO aborted. */
static int
save_model (const char *save, const bl_fit *fit, const cli_model *m, cli_out *so)
{
  bl_err err;
  if (cli_out_open (so, save) != 0)
    return EXIT_DATA;
  if (bl_model_write (so->f, fit, m->terms, m->offset, m->job.weights, &err) != BL_OK)
    return cli_out_fail (so, "fit", &err, errno);
  return 0;
}

/* Fit M's model (and test it against SMALL, the smaller model, when given), print its
   warnings and write its report (and save it): the exit code. */
static int
fit_report (const cli_model *m, const bl_terms *small, int json, int quiet,
            const char *output, const char *save)
{
  bl_job_result *res = NULL;
  const bl_fit *fit;
  bl_err err;
  cli_out out;
  int st, rc = EXIT_DATA;
  st = cli_model_run (m, BL_JOB_FIT, BL_DIAG_SEED, NULL, small, &res, &err);
  if (!res || cli_cancel) {
    /* a cancelled fit comes back unconverged (BL_ECANCEL in its status): no report of it */
    rc = res ? cli_interrupted ("fit") : cli_lib_error ("fit", &err);
    goto done;
  }
  fit = bl_job_result_fit (res);
  if (!quiet) {
    const bl_warnings *wn = bl_fit_warnings (fit);
    cli_model_warn_drops (m);
    for (size_t i = 0; i < wn->n; i++)
      cli_warn ("fit", "%s", wn->msg[i]);
  }
  if (st != BL_OK) {                 /* the likelihood-ratio test against the smaller model */
    rc = cli_lib_error ("fit", &err);
    goto done;
  }
  if (cli_cancel) {                 /* interrupted after the fit (the nested test): nothing
                                       written */
    rc = cli_interrupted ("fit");
    goto done;
  }
  if (cli_out_open (&out, output) != 0)
    goto done;
  {
    const bl_report_info info = { m->job.data, m->terms, m->offset, m->job.weights,
                                  bl_version (), bl_job_result_nested (res), NULL };
    st = json ? bl_report_fit_json (out.f, fit, &info, &err)
              : bl_report_fit_text (out.f, fit, &info, &err);
  }
  if (st != BL_OK) {
    rc = cli_out_fail (&out, "fit", &err, errno);
  } else if (!bl_fit_stats_get (fit)->converged) {
    /* the report of a fit that did not converge, and no model saved */
    if (cli_out_commit (&out) == 0)
      cli_error ("fit", "%s", bl_fit_status (fit)->msg);
  } else if (!save) {
    if (cli_out_commit (&out) == 0)
      rc = EXIT_DONE;
  } else {
    /* the report and the saved model land together, or neither does */
    cli_out so, *const both[] = { &so, &out };
    if ((rc = save_model (save, fit, m, &so)) != 0)
      cli_out_abort (&out);
    else
      rc = cli_out_commit_all (both, 2) == 0 ? EXIT_DONE : EXIT_DATA;
  }
done:
  bl_job_result_free (res);
  return rc;
}

int
cmd_fit (int argc, char **argv)
{
  const char *output = NULL, *save = NULL;
  int json = 0, quiet = 0, c, rc;
  cli_model m;
  bl_terms *small = NULL;
  bl_err err;

  cli_model_init (&m);
  bl_err_clear (&err);
  optind = 1;
  opterr = 0;
  struct option long_opts[CLI_LONG_OPTS_MAX];
  cli_model_long_opts (long_opts, own_opts);
  while ((c = getopt_long (argc, argv, ":o:qh", long_opts, NULL)) != -1) {
    const int r = cli_model_option (&m, c, optarg, "fit");
    if (r > 0) {
      rc = r;
      goto done;
    }
    if (r == 0)
      continue;
    switch (c) {
    case OPT_JSON: json = 1; break;
    case OPT_SAVE:
      if (optarg[0] == '\0') {
        rc = cli_usage_error ("fit", "--save", "the file name is empty");
        goto done;
      }
      if (strcmp (optarg, "-") == 0) {
        rc = cli_usage_error ("fit", "--save", "the model needs a file name, not '%s'",
                              optarg);
        goto done;
      }
      save = optarg;
      break;
    case 'o': output = optarg; break;
    case 'q': quiet = 1; break;
    default:
      rc = cli_model_option_end (&m, c, "fit", argv, usage_head, usage_tail);
      goto done;
    }
  }
  if ((rc = cli_model_finish (&m, argc, argv, optind, "fit")) != 0)
    goto done;
  {                   /* no output replaces the data or another output, before any work */
    const cli_path paths[] = { { "DATA", m.job.data, 0 },
                               { output ? "--output" : "the report", output ? output : "-", 1 },
                               { "--save", save, 1 } };
    if ((rc = cli_paths_check ("fit", paths, sizeof paths / sizeof paths[0])) != 0)
      goto done;
  }
  /* the smaller model's syntax, before any work */
  if (m.job.against && !(small = bl_terms_parse (m.job.against, "--against", &err))) {
    rc = cli_lib_error ("fit", &err);
    goto done;
  }
  if ((rc = cli_model_load (&m, "fit")) == 0)
    rc = fit_report (&m, small, json, quiet, output, save);
done:
  bl_terms_free (small);
  cli_model_free (&m);
  return rc;
}
