/* bench_util.c -- the benchmark programs' shared helpers (bench_util.h). */
#define _GNU_SOURCE
#include <errno.h>
#include <fcntl.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>
#include <sys/stat.h>
#include <sys/types.h>
#include <sys/wait.h>
#include <time.h>
#include <unistd.h>
#include "bench_util.h"

double
now (void)
{
  struct timespec ts;
  clock_gettime (CLOCK_MONOTONIC, &ts);
  return (double) ts.tv_sec + 1e-9 * (double) ts.tv_nsec;
}

void
die (const char *what, const char *msg)
{
  fprintf (stderr, "bench: %s: %s\n", what, msg);
  exit (1);
}

size_t
env_size (const char *name, size_t dflt)
{
  const char *s = getenv (name);
  char *end;
  unsigned long long v;
  if (!s || !*s)
    return dflt;
  errno = 0;
  v = strtoull (s, &end, 10);
  if (errno || *end || v < 1000)
    die (name, "needs a whole number of rows, at least 1000");
  return (size_t) v;
}

double
file_bytes (const char *path)
{
  struct stat sb;
  if (stat (path, &sb) != 0)
    die (path, strerror (errno));
  return (double) sb.st_size;
}

/* Read PATH once to /dev/null in-process: puts it in the page cache. */
void
warm (const char *path)
{
  static char buf[1 << 20];
  const int fd = open (path, O_RDONLY);
  if (fd < 0)
    die (path, strerror (errno));
  while (read (fd, buf, sizeof buf) > 0)
    ;
  close (fd);
}

/* Wall time of ARGV run with stdout to /dev/null; -1 when it could not run or failed. */
double
time_cmd (char *const argv[])
{
  const double t0 = now ();
  int status;
  const pid_t pid = fork ();
  if (pid < 0)
    return -1.0;
  if (pid == 0) {
    const int fd = open ("/dev/null", O_WRONLY);
    if (fd < 0 || dup2 (fd, STDOUT_FILENO) < 0)
      _exit (127);
    execvp (argv[0], argv);
    _exit (127);
  }
  if (waitpid (pid, &status, 0) != pid || !WIFEXITED (status) || WEXITSTATUS (status) != 0)
    return -1.0;
  return now () - t0;
}

double
best_cmd (char *const argv[], int reps)
{
  double best = -1.0;
  for (int r = 0; r < reps; r++) {
    const double t = time_cmd (argv);
    if (t < 0.0)
      return -1.0;
    if (best < 0.0 || t < best)
      best = t;
  }
  return best;
}

/* Peak resident set (VmHWM) in bytes, from /proc/self/status; getrusage as a fallback. */
double
peak_rss (void)
{
  FILE *f = fopen ("/proc/self/status", "r");
  char line[256];
  struct rusage ru;
  if (f) {
    while (fgets (line, sizeof line, f))
      if (strncmp (line, "VmHWM:", 6) == 0) {
        fclose (f);
        return 1024.0 * strtod (line + 6, NULL);
      }
    fclose (f);
  }
  getrusage (RUSAGE_SELF, &ru);
  return 1024.0 * (double) ru.ru_maxrss;
}

double
cur_rss (void)
{
  FILE *f = fopen ("/proc/self/status", "r");
  char line[256];
  double v = 0.0;
  if (!f)
    return 0.0;
  while (fgets (line, sizeof line, f))
    if (strncmp (line, "VmRSS:", 6) == 0)
      v = 1024.0 * strtod (line + 6, NULL);
  fclose (f);
  return v;
}

/* CPU time the whole machine spent busy (all cores, /proc/stat), in seconds; -1 if unknown. */
double
machine_busy (void)
{
  FILE *f = fopen ("/proc/stat", "r");
  unsigned long long v[8] = { 0 };
  const double hz = (double) sysconf (_SC_CLK_TCK);
  int k;
  if (!f)
    return -1.0;
  k = fscanf (f, "cpu %llu %llu %llu %llu %llu %llu %llu %llu", &v[0], &v[1], &v[2], &v[3],
              &v[4], &v[5], &v[6], &v[7]);
  fclose (f);
  if (k != 8 || hz <= 0.0)
    return -1.0;
  /* user nice system idle iowait irq softirq steal: all but idle and iowait are busy */
  return (double) (v[0] + v[1] + v[2] + v[5] + v[6] + v[7]) / hz;
}

/* CPU seconds of this process and its waited-for children (cat, gzip). */
double
own_cpu (void)
{
  struct rusage a, b;
  getrusage (RUSAGE_SELF, &a);
  getrusage (RUSAGE_CHILDREN, &b);
  return (double) (a.ru_utime.tv_sec + a.ru_stime.tv_sec + b.ru_utime.tv_sec
                   + b.ru_stime.tv_sec)
         + 1e-6 * (double) (a.ru_utime.tv_usec + a.ru_stime.tv_usec + b.ru_utime.tv_usec
                            + b.ru_stime.tv_usec);
}

/* Other work on the machine while a mode ran: the fraction of all cores that processes other
   than this one kept busy.  A benchmark on a shared machine measures the neighbours too. */

void
load_begin (load *l)
{
  l->wall = now ();
  l->busy = machine_busy ();
  l->own = own_cpu ();
}

/* Print TAG.others_cpu (the share of all cores that other processes used), TAG.own_cpu (this
   process's share) and TAG.disturbed: 1 when others used more than the cores this step leaves
   free (it wants WANT of them) plus 5% of the machine, so that some of its work waited for a
   core.  A single-threaded step beside one busy neighbour on two cores is not disturbed. */
void
load_end (const load *l, const char *tag, unsigned want)
{
  const double wall = now () - l->wall, busy = machine_busy (), own = own_cpu () - l->own;
  const long ncpu = sysconf (_SC_NPROCESSORS_ONLN);
  double other, mine, spare;
  int disturbed;
  if (l->busy < 0.0 || busy < 0.0 || wall <= 0.0 || ncpu < 1)
    return;
  other = (busy - l->busy - own) / (wall * (double) ncpu);
  mine = own / (wall * (double) ncpu);
  spare = (double) ncpu > (double) want ? ((double) ncpu - (double) want) / (double) ncpu : 0.0;
  if (other < 0.0)
    other = 0.0;
  disturbed = other > spare + 0.05;
  printf ("%s.others_cpu %.4f\n%s.own_cpu %.4f\n%s.disturbed %d\n", tag, other, tag, mine, tag,
          disturbed);
  if (disturbed)
    fprintf (stderr, "  warning: other processes kept %.0f%% of the machine busy while this step "
             "used %.0f%%: its figures are not reliable\n", 100.0 * other, 100.0 * mine);
}

int
cmp_double (const void *a, const void *b)
{
  const double x = *(const double *) a, y = *(const double *) b;
  return (x > y) - (x < y);
}


void
out_flush (out *o)
{
  if (o->len && fwrite (o->buf, 1, o->len, o->f) != o->len)
    die (o->path, "write failed");
  if (o->len && o->gz && gzwrite (o->gz, o->buf, (unsigned) o->len) != (int) o->len)
    die (o->path, "gzip write failed");
  o->len = 0;
}

/* Append X with 4 decimals ("%.4f" rounded half away from zero; exact enough for data). */
void
put_fixed4 (out *o, double x)
{
  char tmp[32];
  char *p = tmp + sizeof tmp;
  long long v = llround (fabs (x) * 1e4);
  const int neg = x < 0.0 && v != 0;
  for (int k = 0; k < 4; k++) {
    *--p = (char) ('0' + v % 10);
    v /= 10;
  }
  *--p = '.';
  do {
    *--p = (char) ('0' + v % 10);
    v /= 10;
  } while (v);
  if (neg)
    *--p = '-';
  memcpy (o->buf + o->len, p, (size_t) (tmp + sizeof tmp - p));
  o->len += (size_t) (tmp + sizeof tmp - p);
}



results
results_read (const char *path)
{
  FILE *f = fopen (path, "r");
  results r = { NULL, 0 };
  size_t cap = 0;
  char line[256];
  if (!f)
    die (path, strerror (errno));
  while (fgets (line, sizeof line, f)) {
    if (r.n == cap) {
      cap = cap ? 2 * cap : 64;
      if (!(r.e = realloc (r.e, cap * sizeof *r.e)))
        die ("report", "out of memory");
    }
    if (sscanf (line, "%63s %63s", r.e[r.n].key, r.e[r.n].val) == 2)
      r.n++;
  }
  fclose (f);
  return r;
}

const char *
get_s (const results *r, const char *key)
{
  for (size_t i = r->n; i-- > 0;)     /* the last value of a key wins */
    if (strcmp (r->e[i].key, key) == 0)
      return r->e[i].val;
  return NULL;
}

double
get (const results *r, const char *key)
{
  const char *s = get_s (r, key);
  return s ? strtod (s, NULL) : NAN;
}

/* One row: FIGURE, MEASURED, REFERENCE, RATIO, TARGET; LO <= ratio <= HI passes. */
void
row (tally *t, const char *figure, double meas, const char *unit, double ref,
     const char *refname, double ratio, const char *target, double lo, double hi)
{
  char m[32], rf[64], ra[32];
  const char *verdict;
  if (isnan (meas) || isnan (ref) || isnan (ratio) || meas < 0.0 || ref < 0.0) {
    verdict = "FAIL(no data)";
    t->fail++;
  } else if (ratio >= lo && ratio <= hi) {
    verdict = "PASS";
  } else {
    verdict = "MISS";
    t->miss++;
  }
  snprintf (m, sizeof m, "%.4g %s", meas, unit);
  snprintf (rf, sizeof rf, "%.4g %s", ref, refname);
  snprintf (ra, sizeof ra, "%.3g", ratio);
  printf ("%-40s %-14s %-28s %-8s %-14s %s\n", figure, m, rf, ra, target, verdict);
}
