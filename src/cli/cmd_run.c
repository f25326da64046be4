/* cmd_run.c -- 'ballast run SPEC': every job of a spec file into one report folder. */
#include <getopt.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>
#include "ballast.h"
#include "job.h"
#include "cli.h"

static const char usage[] =
  "usage: ballast run SPEC [-o OUTDIR] [-j N] [-q]\n"
  "\n"
  "Run every job of the spec file SPEC (doc/spec-format.md): a comparison of variance\n"
  "treatments, or one model, per job.  OUTDIR (default NAME-report in the current folder,\n"
  "NAME being SPEC's file name without its extension) receives JOB/result.json,\n"
  "JOB/residuals.csv, summary.json, summary.csv and index.html, a report that opens in any\n"
  "browser.  Files ballast does not own are left alone.\n"
  "\n"
  "  -o, --output OUTDIR     the report folder\n"
  "  -j, --jobs N            run N jobs at once (default 1); results are identical\n"
  "  -q, --quiet             no progress and no warnings on stderr\n"
  "  -h, --help              this help\n"
  "\n"
  "The whole spec is checked before any job runs.  exit status: 0 every job done; 1 some job\n"
  "failed (its reason is in the summary and the report) or OUTDIR unusable; 2 a usage or\n"
  "spec error (file and line named); 130 interrupted (finished files stay, complete).\n";

static const struct option long_opts[] = {
  { "output", required_argument, NULL, 'o' },
  { "jobs", required_argument, NULL, 'j' },
  { "quiet", no_argument, NULL, 'q' },
  { "help", no_argument, NULL, 'h' },
  { NULL, 0, NULL, 0 }
};

static void
progress (void *ctx, size_t done, size_t total, const char *job, double seconds)
{
  (void) ctx;
  fprintf (stderr, "ballast: run: job %zu of %zu done: %s (%.1f s)\n", done, total, job,
           seconds);
}

int
cmd_run (int argc, char **argv)
{
  const char *outdir = NULL;
  char defdir[1100];
  size_t jobs = 1;
  int quiet = 0, c, rc;
  bl_spec *spec;
  bl_batch_opts bo;
  bl_batch_row *rows;
  bl_err err;
  size_t failed = 0;

  optind = 1;
  opterr = 0;
  while ((c = getopt_long (argc, argv, ":o:j:qh", long_opts, NULL)) != -1) {
    switch (c) {
    case 'o':
      if (!optarg[0])
        return cli_usage_error ("run", "--output", "the folder name is empty");
      outdir = optarg;
      break;
    case 'j':
      if (cli_parse_size (optarg, &jobs) != 0 || jobs > 16)
        return cli_usage_error ("run", "--jobs", "expected an integer from 1 to 16, got '%s'",
                                optarg);
      break;
    case 'q': quiet = 1; break;
    case 'h':
      fputs (usage, stdout);
      return EXIT_DONE;
    case ':':
      return cli_usage_error ("run", argv[optind - 1], "this option needs a value");
    default:
      return cli_usage_error ("run", argv[optind - 1], "unknown option");
    }
  }
  if (optind >= argc)
    return cli_usage_error ("run", NULL, "no SPEC file given");
  if (argc - optind > 1)
    return cli_usage_error ("run", argv[optind + 1], "only one SPEC file is taken");
  if (!argv[optind][0])
    return cli_usage_error ("run", "SPEC", "the file name is empty");
  bl_err_clear (&err);
  if (!(spec = bl_spec_read (argv[optind], &err)))
    return err.code == BL_ESPEC ? (cli_error (err.where, "%s", err.msg), EXIT_USAGE)
                                : cli_lib_error ("run", &err);
  if (!outdir) {
    snprintf (defdir, sizeof defdir, "%s-report", bl_spec_stem (spec));
    outdir = defdir;
  }
  rows = calloc (bl_spec_njobs (spec), sizeof *rows);
  if (!rows) {
    bl_spec_free (spec);
    cli_error ("run", "out of memory");
    return EXIT_DATA;
  }
  bl_batch_opts_init (&bo);
  bo.jobs = (unsigned) jobs;
  bo.cancel = &cli_cancel;
  bo.spec_path = argv[optind];
  bo.outdir_label = outdir == defdir ? "OUTDIR" : "--output";
  if (!quiet && isatty (STDERR_FILENO))
    bo.progress = progress;
  rc = EXIT_DONE;
  if (bl_batch_run (spec, outdir, &bo, rows, &err) != BL_OK) {
    if (err.code == BL_ECANCEL) {
      rc = cli_interrupted ("run");
    } else if (err.code == BL_ESPEC) {   /* an output of the run is one of its inputs */
      rc = cli_lib_error ("run", &err);
    } else {
      /* the jobs that ran and failed (a full disk) first, then what stopped the run */
      for (size_t i = 0; i < bl_spec_njobs (spec) && !quiet; i++)
        if (rows[i].job[0] && !rows[i].ok)
          cli_error (rows[i].job, "%s", rows[i].message);
      cli_error (err.where, "%s", err.msg);
      rc = EXIT_DATA;
    }
  } else {
    for (size_t i = 0; i < bl_spec_njobs (spec); i++)
      if (!rows[i].ok) {
        failed++;
        if (!quiet)
          cli_error (rows[i].job, "%s", rows[i].message);
      }
    if (failed)
      rc = EXIT_DATA;
    if (!quiet)
      fprintf (stderr, "ballast: run: %zu job%s, %zu failed; report in %s/index.html\n",
               bl_spec_njobs (spec), bl_spec_njobs (spec) == 1 ? "" : "s", failed, outdir);
  }
  free (rows);
  bl_spec_free (spec);
  return rc;
}
