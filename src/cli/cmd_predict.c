/* cmd_predict.c -- 'ballast predict MODEL NEWDATA': apply a saved model (ballast fit --save)
   to new rows: means with confidence intervals and prediction intervals, as CSV, and, when
   the new data hold the response, out-of-sample scores. */
#include <errno.h>
#include <getopt.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "ballast.h"
#include "cli.h"
#include "model.h"

#define MAX_KEEP 256

static const char usage[] =
  "usage: ballast predict MODEL NEWDATA [-o OUT.csv] [--keep COL,...] [--level X]\n"
  "\n"
  "Apply MODEL (a file written by 'ballast fit --save') to the rows of NEWDATA (CSV or TSV,\n"
  "optionally gzip-compressed; '-' reads standard input) and write one CSV record per row,\n"
  "in order: row (1-based data row), mean, mean_lo, mean_hi (interval for the mean),\n"
  "pred_lo, pred_hi (interval for a new observation), then the kept columns.\n"
  "Every column the model uses must be present and filled; categorical levels must be\n"
  "levels the model was fitted with.  When NEWDATA holds the response, the deviance, RMSE\n"
  "and MAE of the predictions are printed (stderr, or stdout with -o).\n"
  "The prediction intervals of poisson, gamma and inverse-gaussian models treat the\n"
  "fitted mean and dispersion as known (doc/model-format.md).\n"
  "\n"
  "options:\n"
  "  -o, --output FILE       write the CSV to FILE (atomically) instead of stdout\n"
  "  --keep COL,...          copy these NEWDATA columns into the output (repeatable)\n"
  "  --level X               level of both intervals, in (0, 1) (default: the fit's)\n"
  "  --median                transformed models: also a column 'median', the naive\n"
  "                          back-transform h^-1(x'b) (the mean column is Duan's smeared\n"
  "                          mean)\n"
  "  -q, --quiet             no scores\n"
  "  -h, --help              this help\n"
  "\n"
  "exit status: 0 done; 1 data or model problem (nothing is written then); 2 usage.\n";

enum { OPT_KEEP = 400, OPT_LEVEL_P, OPT_MEDIAN };

static const struct option long_opts[] = {
  { "output", required_argument, NULL, 'o' },
  { "keep", required_argument, NULL, OPT_KEEP },
  { "level", required_argument, NULL, OPT_LEVEL_P },
  { "median", no_argument, NULL, OPT_MEDIAN },
  { "quiet", no_argument, NULL, 'q' },
  { "help", no_argument, NULL, 'h' },
  { NULL, 0, NULL, 0 }
};

/* Split the comma list ARG into KEEP (pointers into BUF, a copy of ARG the caller keeps). */
static int
add_keep (char *buf, const char **keep, size_t *nkeep)
{
  for (char *s = buf, *e; s; s = e) {
    e = strchr (s, ',');
    if (e)
      *e++ = '\0';
    if (!*s)
      return cli_usage_error ("predict", "--keep", "empty column name");
    if (*nkeep == MAX_KEEP)
      return cli_usage_error ("predict", "--keep", "more than %d columns", MAX_KEEP);
    keep[(*nkeep)++] = s;
  }
  return 0;
}

int
cmd_predict (int argc, char **argv)
{
  const char *output = NULL, *keep[MAX_KEEP];
  char *keepbuf[MAX_KEEP];
  size_t nkeep = 0, nbuf = 0;
  double level = 0.0;
  int quiet = 0, c, rc = EXIT_DATA, median = 0;
  bl_model *m = NULL;
  bl_table *t = NULL;
  bl_prediction *pr = NULL;
  bl_table_opts topt;
  bl_err err;
  cli_out out;

  bl_err_clear (&err);
  optind = 1;
  opterr = 0;
  while ((c = getopt_long (argc, argv, ":o:qh", long_opts, NULL)) != -1) {
    switch (c) {
    case 'o': output = optarg; break;
    case 'q': quiet = 1; break;
    case OPT_MEDIAN: median = 1; break;
    case OPT_KEEP:
      if (nbuf == MAX_KEEP) {
        rc = cli_usage_error ("predict", "--keep", "more than %d --keep options", MAX_KEEP);
        goto done;
      }
      if (!(keepbuf[nbuf] = strdup (optarg))) {
        cli_error ("predict", "out of memory");
        goto done;
      }
      if ((rc = add_keep (keepbuf[nbuf++], keep, &nkeep)) != 0)
        goto done;
      break;
    case OPT_LEVEL_P:
      if (cli_parse_double (optarg, &level) != 0 || !(level > 0.0 && level < 1.0)) {
        rc = cli_usage_error ("predict", "--level", "expected a number between 0 and 1, "
                              "got '%s'", optarg);
        goto done;
      }
      break;
    case 'h':
      fputs (usage, stdout);
      rc = EXIT_DONE;
      goto done;
    case ':':
      rc = cli_usage_error ("predict", argv[optind - 1], "this option needs a value");
      goto done;
    default:
      rc = cli_usage_error ("predict", argv[optind - 1], "unknown option");
      goto done;
    }
  }
  if (argc - optind != 2) {
    rc = cli_usage_error ("predict", argc - optind > 2 ? argv[optind + 2] : NULL,
                          argc - optind < 2 ? "expected MODEL and NEWDATA"
                                            : "only MODEL and NEWDATA are taken");
    goto done;
  }
  {                   /* no output replaces MODEL, NEWDATA or another output */
    const int to_stdout = cli_out_to_stdout (output);
    const cli_path paths[] = { { "MODEL", argv[optind], 0 }, { "NEWDATA", argv[optind + 1], 0 },
                               { output ? "--output" : "the predictions",
                                 output ? output : "-", 1 },
                               { "the scores", !to_stdout && !quiet ? "-" : NULL, 1 } };
    if ((rc = cli_paths_check ("predict", paths, sizeof paths / sizeof paths[0])) != 0)
      goto done;
  }
  rc = EXIT_DATA;
  if (!(m = bl_model_read (argv[optind], &err))) {
    rc = cli_lib_error ("predict", &err);
    goto done;
  }
  bl_table_opts_init (&topt);
  bl_model_table_opts (m, &topt);
  topt.cancel = &cli_cancel;
  if (!(t = bl_table_read (argv[optind + 1], &topt, &err))
      || !(pr = bl_model_predict (m, t, level, &err))) {
    rc = cli_lib_error ("predict", &err);
    goto done;
  }
  if (cli_out_open (&out, output) != 0)
    goto done;
  bl_prediction_csv_opts copt;
  bl_prediction_csv_opts_init (&copt);
  copt.keep = keep;
  copt.nkeep = nkeep;
  copt.median = median;
  if (bl_prediction_write_csv (out.f, pr, t, &copt, &err) != BL_OK) {
    rc = cli_out_fail (&out, "predict", &err, errno);
    goto done;
  }
  if (cli_out_commit (&out) != 0)
    goto done;
  rc = EXIT_DONE;
  if (pr->has_response && !quiet) {
    FILE *s = out.is_stdout ? stderr : stdout;
    fprintf (s, "scores on '%s' (%zu of %zu rows have '%s'): deviance %.6g, rmse %.6g, "
             "mae %.6g\n", bl_table_source (t), pr->n_scored, pr->n, bl_model_response (m),
             pr->deviance, pr->rmse, pr->mae);
  }
done:
  for (size_t i = 0; i < nbuf; i++)
    free (keepbuf[i]);
  bl_prediction_free (pr);
  bl_table_free (t);
  bl_model_free (m);
  return rc;
}
