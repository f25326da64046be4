/* cli.c -- messages, exit codes and atomic output files for the ballast program. */
#include <errno.h>
#include <fcntl.h>
#include <limits.h>
#include <stdint.h>
#include <sys/stat.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>
#include "cli.h"

volatile sig_atomic_t cli_cancel = 0;
static int interrupt_reported = 0;   /* "interrupted" printed already */

static void
vmsg (const char *kind, const char *where, const char *fmt, va_list ap)
{
  fputs ("ballast: ", stderr);
  if (where && where[0])
    fprintf (stderr, "%s: ", where);
  if (kind)
    fputs (kind, stderr);
  vfprintf (stderr, fmt, ap);
  fputc ('\n', stderr);
}

void
cli_error (const char *where, const char *fmt, ...)
{
  va_list ap;
  va_start (ap, fmt);
  vmsg (NULL, where, fmt, ap);
  va_end (ap);
}

void
cli_warn (const char *where, const char *fmt, ...)
{
  va_list ap;
  va_start (ap, fmt);
  vmsg ("warning: ", where, fmt, ap);
  va_end (ap);
}

int
cli_usage_error (const char *cmd, const char *where, const char *fmt, ...)
{
  va_list ap;
  va_start (ap, fmt);
  vmsg (NULL, where, fmt, ap);
  va_end (ap);
  if (cmd)
    fprintf (stderr, "see 'ballast %s --help'\n", cmd);
  else
    fputs ("see 'ballast --help'\n", stderr);
  return EXIT_USAGE;
}

int
cli_interrupted (const char *cmd)
{
  if (!interrupt_reported)
    cli_error (cmd, "interrupted");
  interrupt_reported = 1;
  return EXIT_INTERRUPTED;
}

int
cli_lib_error (const char *cmd, const bl_err *err)
{
  /* after SIGINT, a failure (a cancelled read or fit, or a read that saw EINTR) is the
     interrupt's doing: report that, not its symptom */
  if (err->code == BL_ECANCEL || cli_cancel)
    return cli_interrupted (cmd);
  cli_error (err->where, "%s", err->msg[0] ? err->msg : bl_strerror (err->code));
  if (err->code == BL_ESPEC) {
    fprintf (stderr, "see 'ballast %s --help'\n", cmd);
    return EXIT_USAGE;
  }
  return EXIT_DATA;
}

int
cli_out_open (cli_out *o, const char *path)
{
  struct stat sb;
  int fd;
  memset (o, 0, sizeof *o);
  if (!path || strcmp (path, "-") == 0) {
    o->f = stdout;
    o->is_stdout = 1;
    return 0;
  }
  snprintf (o->path, sizeof o->path, "%s", path);
  if (stat (path, &sb) == 0 && !S_ISREG (sb.st_mode) && !S_ISDIR (sb.st_mode)) {
    /* a device or a pipe (-o /dev/null, a FIFO): a temporary renamed over it would replace
       it by a regular file (for root, even /dev/null), so it is written in place */
    o->f = fopen (path, "w");
    if (!o->f) {
      cli_error (path, "cannot open: %s", strerror (errno));
      return -1;
    }
    o->is_direct = 1;
    return 0;
  }
  snprintf (o->tmp, sizeof o->tmp, "%s.tmp-XXXXXX", path);
  fd = mkstemp (o->tmp);
  if (fd < 0) {
    cli_error (path, "cannot create a temporary file beside it: %s", strerror (errno));
    return -1;
  }
  o->f = fdopen (fd, "w");
  if (!o->f) {
    close (fd);
    unlink (o->tmp);
    cli_error (path, "cannot open: %s", strerror (errno));
    return -1;
  }
  return 0;
}

int
cli_out_commit (cli_out *o)
{
  if (o->is_stdout)
    return fflush (stdout) == 0 ? 0 : -1;
  if (o->is_direct) {
    const int bad = fflush (o->f) != 0 || ferror (o->f);
    if (fclose (o->f) != 0 || bad) {
      cli_error (o->path, "write failed: %s", strerror (errno));
      return -1;
    }
    return cli_cancel ? -1 : 0;
  }
  if (cli_cancel) {           /* interrupted: the caller reports it (cli_interrupted) */
    fclose (o->f);
    goto discard;
  }
  if (fflush (o->f) != 0 || fsync (fileno (o->f)) != 0 || ferror (o->f)) {
    cli_error (o->path, "write failed: %s", strerror (errno));
    fclose (o->f);
    goto discard;
  }
  if (fclose (o->f) != 0) {
    cli_error (o->path, "write failed: %s", strerror (errno));
    goto discard;
  }
  if (chmod (o->tmp, 0644) != 0 || rename (o->tmp, o->path) != 0) {
    cli_error (o->path, "cannot move the finished file into place: %s", strerror (errno));
    goto discard;
  }
  return 0;
discard:                      /* the temporary is removed; PATH is left as it was */
  unlink (o->tmp);
  return -1;
}

void
cli_out_abort (cli_out *o)
{
  if (o->is_stdout || !o->f)
    return;
  fclose (o->f);
  if (!o->is_direct)
    unlink (o->tmp);
}

int
cli_parse_double (const char *s, double *out)
{
  char *end;
  double v;
  errno = 0;
  v = strtod (s, &end);
  if (end == s || *end != '\0' || errno == ERANGE || !isfinite (v))
    return -1;
  *out = v;
  return 0;
}

int
cli_parse_size (const char *s, size_t *out)
{
  char *end;
  unsigned long long v;
  if (*s == '-' || *s == '\0')
    return -1;
  errno = 0;
  v = strtoull (s, &end, 10);
  if (*end != '\0' || errno == ERANGE || v == 0 || v > (unsigned long long) SIZE_MAX)
    return -1;
  *out = (size_t) v;
  return 0;
}
