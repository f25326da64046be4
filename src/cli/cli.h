/* cli.h -- what every subcommand shares: messages, exit codes, atomic output files. */
#ifndef BALLAST_CLI_H
#define BALLAST_CLI_H
#include <signal.h>
#include <stdio.h>
#include "error.h"

/* Exit codes, everywhere in the tool (documented in README.md and doc/cli.md).
   EXIT_INTERRUPTED is the shell's 128 + SIGINT: the command was stopped by an interrupt. */
enum { EXIT_DONE = 0, EXIT_DATA = 1, EXIT_USAGE = 2, EXIT_INTERRUPTED = 130 };

/* Set by the SIGINT handler; long library operations poll it. */
extern volatile sig_atomic_t cli_cancel;

/* "ballast: CMD: interrupted" on stderr (once per process, however often it is called);
   returns EXIT_INTERRUPTED.  Called when cli_cancel is set, before anything is written. */
int cli_interrupted (const char *cmd);

/* "ballast: WHERE: message" on stderr (WHERE may be NULL or empty). */
void cli_error (const char *where, const char *fmt, ...)
  __attribute__ ((format (printf, 2, 3)));
void cli_warn (const char *where, const char *fmt, ...)
  __attribute__ ((format (printf, 2, 3)));
/* A usage error: the message, then "see 'ballast CMD --help'"; returns EXIT_USAGE. */
int cli_usage_error (const char *cmd, const char *where, const char *fmt, ...)
  __attribute__ ((format (printf, 3, 4)));
/* Print a library error and return the exit code for it: 2 for BL_ESPEC (a usage error: the
   hint "see 'ballast CMD --help'" follows), EXIT_INTERRUPTED for BL_ECANCEL or any error
   after SIGINT (then only "interrupted" is printed: the error is its consequence), else 1. */
int cli_lib_error (const char *cmd, const bl_err *err);

/* An output that is written to a temporary file beside PATH and renamed over PATH when
   complete ("-" or NULL is standard output, written directly; so is a PATH that exists and
   is not a regular file, such as /dev/null or a FIFO, which a rename would replace). */
typedef struct cli_out {
  FILE *f;
  char path[4096], tmp[4096];
  int is_stdout;
  int is_direct;              /* PATH is a device or a pipe: written in place */
} cli_out;
int cli_out_open (cli_out *o, const char *path);      /* 0, or -1 with a message printed */
int cli_out_commit (cli_out *o);                      /* fsync + rename; 0 or -1 */
/* cli_out_commit refuses (-1, the temporary removed, no message) once cli_cancel is set: an
   interrupted command leaves no file of its own behind. */
void cli_out_abort (cli_out *o);                      /* remove the temporary */

/* Parse a whole string as a finite double / a positive size; 0 on success. */
int cli_parse_double (const char *s, double *out);
int cli_parse_size (const char *s, size_t *out);

#endif
