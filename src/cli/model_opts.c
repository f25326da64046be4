/* model_opts.c -- the options every modelling subcommand shares. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "cli.h"
#include "model_opts.h"


/* Help lines start their text at this column: "  --KEY ARG" is padded to it. */
#define HELP_COLUMN 26

/* The help of the shared options, from the option table: each group under its heading
   ("model:"), the groups a blank line apart, and each option as "  --KEY ARG", padded to
   HELP_COLUMN, then its text, whose further lines are indented to that column. */
static void
print_help (FILE *f)
{
  const char *group = NULL;
  for (size_t i = 0; i < bl_job_key_count (); i++) {
    const char *og, *arg, *help;
    int col;
    bl_job_key_help (i, &og, &arg, &help);
    if (!(bl_job_key_flags (i) & BL_OPTION_CLI) || !help)
      continue;
    if (!group || strcmp (group, og) != 0)
      fprintf (f, "%s%s:\n", group ? "\n" : "", og);
    group = og;
    col = fprintf (f, "  --%s%s%s", bl_job_key_name (i), arg ? " " : "", arg ? arg : "");
    for (const char *t = help; *t; t++) {
      for (; col < HELP_COLUMN; col++)
        fputc (' ', f);
      fputc (*t, f);
      col = *t == '\n' ? 0 : HELP_COLUMN;
    }
    fputc ('\n', f);
  }
}

void
cli_model_long_opts (struct option *long_opts, const struct option *own)
{
  size_t n = 0;
  for (size_t i = 0; i < bl_job_key_count (); i++) {
    if (!(bl_job_key_flags (i) & BL_OPTION_CLI))
      continue;
    long_opts[n].name = bl_job_key_name (i);
    long_opts[n].has_arg = bl_job_key_takes_value (i) ? required_argument : no_argument;
    long_opts[n].flag = NULL;
    long_opts[n++].val = CLI_OPT_BASE + (int) i;
  }
  for (size_t k = 0; own[k].name && k + 1 < CLI_OWN_MAX; k++)
    long_opts[n++] = own[k];
  memset (&long_opts[n], 0, sizeof long_opts[n]);
}

/* The key of getopt code C, or NULL when C is not a shared option. */
static const char *
key_of (int c)
{
  const size_t i = c >= CLI_OPT_BASE ? (size_t) (c - CLI_OPT_BASE) : bl_job_key_count ();
  return bl_job_key_flags (i) & BL_OPTION_CLI ? bl_job_key_name (i) : NULL;
}

int
cli_model_option_has (int c, unsigned flags)
{
  return key_of (c) && (bl_job_key_flags ((size_t) (c - CLI_OPT_BASE)) & flags) == flags;
}

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
  const char *const key = key_of (c);
  char where[64];
  bl_err err;
  if (!key)
    return -1;
  snprintf (where, sizeof where, "--%s", key);
  if (bl_job_set (&m->job, key, arg, where, &err) != BL_OK)
    return cli_lib_error (cmd, &err);
  return 0;
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
    print_help (stdout);
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

int
cli_model_run (const cli_model *m, bl_job_task task, unsigned long seed, const char *by,
               const bl_terms *small, bl_job_result **res, bl_err *err)
{
  const bl_job_input in = { m->table, m->design, m->offset, small };
  bl_job_run_opts ro;
  bl_err_clear (err);
  bl_job_run_opts_init (&ro);
  ro.task = task;
  ro.seed = seed;
  ro.by = by;
  ro.cancel = &cli_cancel;
  return bl_job_run (&m->job, &in, &ro, res, err);
}
