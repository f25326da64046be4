/* cli.c -- messages, exit codes and atomic output files for the ballast program. */
#include <errno.h>
#include <signal.h>
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
#include "io_path.h"

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

/* How output PATH is written: OUT_STDOUT (standard output: "-", NULL, or a link or device
   that is the file open as standard output), OUT_DIRECT (a device, FIFO, socket or
   terminal, or a link to one: written in place), OUT_ATOMIC (a regular file, or none yet:
   a temporary renamed over it), or OUT_REFUSED with WHY (a folder, or a symbolic link to a
   regular file, a folder or nothing, which the rename would replace by a file). */
enum { OUT_REFUSED = -1, OUT_STDOUT, OUT_DIRECT, OUT_ATOMIC };

static int
out_kind (const char *path, char *why, size_t cap)
{
  struct stat lsb, sb, so;
  int link;
  char target[4096];
  ssize_t tl;
  if (!path || strcmp (path, "-") == 0)
    return OUT_STDOUT;
  if (lstat (path, &lsb) != 0)
    return OUT_ATOMIC;          /* a new file (or one the open will explain) */
  link = S_ISLNK (lsb.st_mode);
  if (link) {
    tl = readlink (path, target, sizeof target - 1);
    target[tl > 0 ? (size_t) tl : 0] = '\0';
    if (stat (path, &sb) != 0) {
      snprintf (why, cap, "is a symbolic link to '%s', which does not exist; writing would "
                "replace the link: name the file itself", target);
      return OUT_REFUSED;
    }
  } else {
    sb = lsb;
  }
  if ((link || !S_ISREG (sb.st_mode)) && fstat (STDOUT_FILENO, &so) == 0
      && so.st_dev == sb.st_dev && so.st_ino == sb.st_ino)
    return OUT_STDOUT;          /* /dev/stdout, /proc/self/fd/1: standard output itself */
  if (S_ISDIR (sb.st_mode)) {
    snprintf (why, cap, link ? "is a symbolic link to a folder; give a file name"
                             : "is a folder; give a file name");
    return OUT_REFUSED;
  }
  if (S_ISREG (sb.st_mode)) {
    if (!link)
      return OUT_ATOMIC;
    snprintf (why, cap, "is a symbolic link to the regular file '%s'; writing would replace "
              "the link: name the file itself", target);
    return OUT_REFUSED;
  }
  return OUT_DIRECT;
}

int
cli_out_to_stdout (const char *path)
{
  char why[8192];
  return out_kind (path, why, sizeof why) == OUT_STDOUT;
}

int
cli_out_check (const char *cmd, const char *opt, const char *path)
{
  char why[8192], tmp[4096 + 16];
  int fd;
  if (path && !path[0])
    return cli_usage_error (cmd, opt, "the file name is empty");
  switch (out_kind (path, why, sizeof why)) {
  case OUT_REFUSED:
    return cli_usage_error (cmd, opt, "'%s' %s", path, why);
  case OUT_ATOMIC:
    /* the folder takes a new file: one is made and removed now, so that a folder that is
       missing, read-only or otherwise unusable is found before any work */
    if (snprintf (tmp, sizeof tmp, "%s.tmp-XXXXXX", path) >= (int) sizeof tmp) {
      cli_error (path, "the file name is too long");
      return EXIT_DATA;
    }
    if ((fd = mkstemp (tmp)) < 0) {
      cli_error (path, "cannot create a file in its folder: %s", strerror (errno));
      return EXIT_DATA;
    }
    close (fd);
    unlink (tmp);
    return 0;
  default:
    return 0;
  }
}

int
cli_paths_check (const char *cmd, const cli_path *p, size_t n)
{
  bl_path_set *s;
  bl_err err;
  int rc = 0;
  bl_err_clear (&err);
  for (size_t i = 0; i < n; i++)   /* an empty name first: it has no identity */
    if (p[i].path && !p[i].path[0])
      return cli_usage_error (cmd, p[i].label, "the file name is empty");
  if (!(s = bl_path_set_new (&err)))
    return cli_lib_error (cmd, &err);
  for (size_t i = 0; i < n && rc == 0; i++)
    if (p[i].path && bl_path_set_add (s, p[i].path, p[i].output ? BL_PATH_OUTPUT
                                      : BL_PATH_INPUT, p[i].label, &err) != BL_OK)
      rc = cli_lib_error (cmd, &err);
  if (rc == 0 && bl_path_set_check (s, &err) != BL_OK)
    rc = cli_lib_error (cmd, &err);
  bl_path_set_free (s);
  for (size_t i = 0; i < n && rc == 0; i++)  /* each output's own form, then its folder */
    if (p[i].output && p[i].path && strcmp (p[i].path, "-") != 0)
      rc = cli_out_check (cmd, p[i].label, p[i].path);
  return rc;
}

int
cli_out_open (cli_out *o, const char *path)
{
  char why[8192];
  int fd;
  memset (o, 0, sizeof *o);
  switch (out_kind (path, why, sizeof why)) {
  case OUT_STDOUT:
    o->f = stdout;
    o->is_stdout = 1;
    return 0;
  case OUT_REFUSED:
    cli_error (path, "%s", why);
    return -1;
  case OUT_DIRECT:
    /* a device or a pipe (-o /dev/null, a FIFO): a temporary renamed over it would replace
       it by a regular file (for root, even /dev/null), so it is written in place */
    snprintf (o->path, sizeof o->path, "%s", path);
    o->f = fopen (path, "w");
    if (!o->f) {
      cli_error (path, "cannot open: %s", strerror (errno));
      return -1;
    }
    o->is_direct = 1;
    return 0;
  default:
    break;
  }
  snprintf (o->path, sizeof o->path, "%s", path);
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

const char *
cli_out_name (const cli_out *o)
{
  return o->is_stdout ? "standard output" : o->path;
}

/* "NAME: write failed: REASON" (E = the errno of the failure; 0 when it is not known). */
static void
write_failed (const char *name, int e)
{
  cli_error (name, "write failed: %s", e ? strerror (e) : "an earlier write to it failed");
}

int
cli_out_commit (cli_out *o)
{
  int e;
  if (o->is_stdout) {
    errno = 0;
    if (fflush (stdout) != 0 || ferror (stdout)) {
      write_failed ("standard output", errno);
      return -1;
    }
    return 0;
  }
  if (o->is_direct) {
    int bad;
    errno = 0;
    bad = fflush (o->f) != 0 || ferror (o->f);
    e = errno;
    if (fclose (o->f) != 0 && !bad) {
      bad = 1;
      e = errno;
    }
    o->f = NULL;
    if (bad) {
      write_failed (o->path, e);
      return -1;
    }
    return cli_cancel ? -1 : 0;
  }
  if (cli_cancel) {           /* interrupted: the caller reports it (cli_interrupted) */
    fclose (o->f);
    goto discard;
  }
  errno = 0;
  if (fflush (o->f) != 0 || fsync (fileno (o->f)) != 0 || ferror (o->f)) {
    write_failed (o->path, errno);
    fclose (o->f);
    goto discard;
  }
  if (fclose (o->f) != 0) {
    write_failed (o->path, errno);
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
  o->f = NULL;
  if (!o->is_direct)
    unlink (o->tmp);
}

int
cli_out_commit_all (cli_out *const *o, size_t n)
{
  sigset_t block, old;
  int rc = 0;
  sigemptyset (&block);
  sigaddset (&block, SIGINT);
  sigprocmask (SIG_BLOCK, &block, &old);
  for (size_t i = 0; i < n; i++) {
    if (rc == 0)
      rc = cli_out_commit (o[i]);
    else
      cli_out_abort (o[i]);
  }
  sigprocmask (SIG_SETMASK, &old, NULL);
  return rc;
}

int
cli_out_fail (cli_out *o, const char *cmd, const bl_err *err, int errno_)
{
  char name[4096];
  snprintf (name, sizeof name, "%s", cli_out_name (o));
  cli_out_abort (o);
  if (err->code == BL_EIO && !cli_cancel) {
    write_failed (name, errno_);
    return EXIT_DATA;
  }
  return cli_lib_error (cmd, err);
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
