/* main.c -- the ballast program: the command table, --help and --version, the GSL error
   handler switched off, SIGINT wired to the library's cancel flag, and the exit status
   (EXIT_INTERRUPTED, 130, whenever SIGINT arrived while a command ran). */
#include <errno.h>
#include <signal.h>
#include <stdio.h>
#include <string.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_version.h>
#include <zlib.h>
#include "ballast.h"
#include "cli.h"

int cmd_fit (int argc, char **argv);
int cmd_diagnose (int argc, char **argv);
int cmd_compare (int argc, char **argv);
int cmd_run (int argc, char **argv);
int cmd_predict (int argc, char **argv);

typedef struct command {
  const char *name;
  int (*run) (int argc, char **argv);
  const char *summary;
} command;

static const command commands[] = {
  { "fit", cmd_fit, "fit one model (GLM, OLS, WLS or transformed OLS) and report it" },
  { "diagnose", cmd_diagnose, "check whether the residual spread is constant" },
  { "compare", cmd_compare, "rank every variance treatment on the same rows" },
  { "run", cmd_run, "run the jobs of a spec file into a report folder" },
  { "predict", cmd_predict, "predict from a saved model, with intervals" },
};
#define NCOMMANDS (sizeof commands / sizeof commands[0])

static void
on_sigint (int sig)
{
  (void) sig;
  cli_cancel = 1;
}

static void
help (FILE *o)
{
  fputs ("usage: ballast COMMAND [OPTION]... ARGS\n"
         "       ballast --help | --version\n\n"
         "Regression for data whose spread grows with its level: counts of events and\n"
         "positive, skewed amounts.\n\n"
         "commands:\n", o);
  for (size_t i = 0; i < NCOMMANDS; i++)
    fprintf (o, "  %-10s %s\n", commands[i].name, commands[i].summary);
  fputs ("\n'ballast COMMAND --help' describes one command.\n"
         "exit status: 0 done; 1 data or model problem; 2 usage or syntax error;\n"
         "130 interrupted (SIGINT).\n", o);
}

static void
version (void)
{
  printf ("ballast %s\n", bl_version ());
  printf ("Copyright (C) 2026 the ballast developers.\n"
          "License GPLv3+: GNU GPL version 3 or later <https://gnu.org/licenses/gpl.html>.\n"
          "This is free software: you are free to change and redistribute it.\n"
          "There is NO WARRANTY, to the extent permitted by law.\n");
  printf ("built with GSL %s (CBLAS: %s) and zlib %s\n", gsl_version, bl_blas_name (),
          zlibVersion ());
}

int
main (int argc, char **argv)
{
  struct sigaction sa;
  int status;
  gsl_set_error_handler_off ();        /* the library checks every GSL status itself */
  memset (&sa, 0, sizeof sa);
  sa.sa_handler = on_sigint;
  sigemptyset (&sa.sa_mask);
  sigaction (SIGINT, &sa, NULL);

  if (argc < 2)
    return cli_usage_error (NULL, NULL, "no command given");
  if (strcmp (argv[1], "--help") == 0 || strcmp (argv[1], "-h") == 0) {
    help (stdout);
    status = EXIT_DONE;
  } else if (strcmp (argv[1], "--version") == 0) {
    version ();
    status = EXIT_DONE;
  } else {
    const command *c = NULL;
    for (size_t i = 0; i < NCOMMANDS; i++)
      if (strcmp (argv[1], commands[i].name) == 0)
        c = &commands[i];
    if (!c)
      return cli_usage_error (NULL, NULL, "unknown command '%s'", argv[1]);
    status = c->run (argc - 1, argv + 1);
    /* a SIGINT seen at any point of the command: it stopped (or its result was not
       committed), whatever path it left by; usage errors are found before any work */
    if (cli_cancel && status != EXIT_USAGE)
      status = cli_interrupted (c->name);
  }
  {
    /* standard output is checked last: a flush, its error flag, and the close; a failure
       is named, with its reason, unless the command failed already */
    int bad, e;
    errno = 0;
    bad = fflush (stdout) != 0 || ferror (stdout);
    e = errno;
    if (fclose (stdout) != 0 && !bad) {
      bad = 1;
      e = errno;
    }
    if (bad && status == EXIT_DONE) {
      cli_error ("standard output", "write failed: %s",
                 e ? strerror (e) : "an earlier write to it failed");
      status = EXIT_DATA;
    }
  }
  return status;
}
