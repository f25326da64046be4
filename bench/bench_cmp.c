/* bench_cmp.c -- the comparer's benchmark: compare, cross-validation, Box-Cox, Tweedie and the
   negative binomial, each timed beside the one fit it is made of (see bench/README.md).

     bench_cmp gen OUTDIR ROWS              write the three data sets of ROWS rows (fixed seed)
     bench_cmp time TAG OUT -- PROGRAM ARGS run PROGRAM with stdout to OUT (a file, or - for
                                            /dev/null): TAG.s its wall time, TAG.peak_bytes
                                            its peak resident set, and the machine's load
     bench_cmp report RESULTS               the table from the collected figures

   The data are an invented workshop scenario: x1..x5 are readings of a job (hours booked,
   part age, ...), site one of six workshops, and y one of three responses drawn from a
   seeded GSL mt19937 stream: repair cost (gamma, log mean linear in the readings and the
   site), labour hours with unbilled jobs (Tweedie p = 1.5, phi = 1, about 30% exact zeros),
   and callbacks (negative binomial, theta = 2). */
#define _GNU_SOURCE
#include <errno.h>
#include <fcntl.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>
#include <sys/types.h>
#include <sys/wait.h>
#include <unistd.h>
#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>
#include <zlib.h>
#include "bench_util.h"

#define CMP_SEED 20261204UL        /* the one seed of the comparer's data sets */
#define CMP_VERSION 1              /* bump when the generator changes: old files are remade */
#define CMP_P 5                    /* numeric readings */
#define CMP_SITES 6                /* levels of the factor */
#define GAMMA_SHAPE 2.5            /* gamma shape: dispersion 0.4 */
#define TW_POWER 1.5
#define TW_PHI 1.0
#define NB_THETA 2.0

static const char *const site_name[CMP_SITES] = { "harbour", "north", "quarry", "rail",
                                                  "south", "yard" };

/* ---------------------------------------------------------------- gen */

/* A Tweedie draw of mean MU, power P in (1, 2) and dispersion PHI: the compound Poisson-gamma
   sum of N ~ Poisson(lambda) gamma variables of shape alpha and scale s, with
   lambda = mu^(2-p) / (phi (2-p)), alpha = (2-p) / (p-1), s = phi (p-1) mu^(p-1)
   (Jorgensen 1997, The Theory of Dispersion Models, section 4.2; Dunn & Smyth 2005,
   Statistics and Computing 15, 267-280, section 2).  P(Y = 0) = exp(-lambda). */
static double
tweedie_draw (gsl_rng *r, double mu, double p, double phi)
{
  const double lambda = pow (mu, 2.0 - p) / (phi * (2.0 - p));
  const unsigned n = gsl_ran_poisson (r, lambda);
  return n ? gsl_ran_gamma (r, (double) n * (2.0 - p) / (p - 1.0),
                            phi * (p - 1.0) * pow (mu, p - 1.0)) : 0.0;
}

static void
put_text (out *o, const char *s)
{
  const size_t k = strlen (s);
  memcpy (o->buf + o->len, s, k);
  o->len += k;
}

/* The three sets over the same readings and sites: row i of each has the same x and site.
   Reading j is m_j + s_j u (u standard normal for even j, uniform on (-1.7, 1.7) for odd j);
   the log mean is c0 + sum_j b_j x_j + a_site, with |b_j| s_j about 0.15. */
static void
gen_sets (const char *dir, size_t n)
{
  static const double a_site[CMP_SITES] = { 0.0, 0.25, -0.2, 0.4, 0.1, -0.35 };
  gsl_rng *r = gsl_rng_alloc (gsl_rng_mt19937);
  out o[3] = { { NULL, NULL, NULL, 0, 1u << 20, NULL }, { NULL, NULL, NULL, 0, 1u << 20, NULL },
               { NULL, NULL, NULL, 0, 1u << 20, NULL } };
  char path[3][4096], gzpath[4096], tmp[64];
  double m[CMP_P], s[CMP_P], b[CMP_P];
  size_t zeros = 0;
  const double t0 = now ();
  if (!r)
    die ("gen", "out of memory");
  gsl_rng_set (r, CMP_SEED);
  snprintf (path[0], sizeof path[0], "%s/cmp.csv", dir);
  snprintf (path[1], sizeof path[1], "%s/tw.csv", dir);
  snprintf (path[2], sizeof path[2], "%s/nb.csv", dir);
  snprintf (gzpath, sizeof gzpath, "%s/cmp.csv.gz", dir);
  for (int k = 0; k < 3; k++) {
    o[k].path = path[k];
    if (!(o[k].buf = malloc (o[k].cap + 4096)) || !(o[k].f = fopen (path[k], "w")))
      die (path[k], "cannot open for writing");
    put_text (&o[k], "x1,x2,x3,x4,x5,site,y\n");
  }
  if (!(o[0].gz = gzopen (gzpath, "wb1")))
    die (gzpath, "cannot open for writing");
  gzbuffer (o[0].gz, 1u << 20);
  for (size_t j = 0; j < CMP_P; j++) {
    m[j] = 4.0 * gsl_rng_uniform (r) - 1.0;
    s[j] = 0.5 + 2.0 * gsl_rng_uniform (r);
    b[j] = ((j % 2) ? -0.15 : 0.15) * (0.6 + 0.8 * gsl_rng_uniform (r)) / s[j];
  }
  for (size_t i = 0; i < n; i++) {
    double lin = 0.0;
    const unsigned site = (unsigned) gsl_rng_uniform_int (r, CMP_SITES);
    for (size_t j = 0; j < CMP_P; j++) {
      const double u = (j % 2 == 0) ? gsl_ran_gaussian_ziggurat (r, 1.0)
                                    : gsl_ran_flat (r, -1.7, 1.7);
      const double x = m[j] + s[j] * u;
      lin += b[j] * ((double) llround (x * 1e4) / 1e4);   /* the value as written */
      for (int k = 0; k < 3; k++) {
        put_fixed4 (&o[k], x);
        o[k].buf[o[k].len++] = ',';
      }
    }
    lin += a_site[site];
    for (int k = 0; k < 3; k++) {
      put_text (&o[k], site_name[site]);
      o[k].buf[o[k].len++] = ',';
    }
    {
      const double mu_g = exp (3.0 + lin);               /* repair cost, about 20 */
      const double y = gsl_ran_gamma (r, GAMMA_SHAPE, mu_g / GAMMA_SHAPE);
      const int k = snprintf (tmp, sizeof tmp, "%.6g\n", y > 1e-300 ? y : 1e-300);
      memcpy (o[0].buf + o[0].len, tmp, (size_t) k);
      o[0].len += (size_t) k;
    }
    {
      const double mu_t = exp (-1.0 + lin);              /* about 30% zeros at phi = 1 */
      const double y = tweedie_draw (r, mu_t, TW_POWER, TW_PHI);
      const int k = y > 0.0 ? snprintf (tmp, sizeof tmp, "%.6g\n", y)
                            : snprintf (tmp, sizeof tmp, "0\n");
      zeros += y == 0.0;
      memcpy (o[1].buf + o[1].len, tmp, (size_t) k);
      o[1].len += (size_t) k;
    }
    {
      /* negative binomial as the Poisson-gamma mixture: lambda ~ Gamma(theta, mu / theta) */
      const double mu_n = exp (0.8 + lin);
      const unsigned y = gsl_ran_poisson (r, gsl_ran_gamma (r, NB_THETA, mu_n / NB_THETA));
      const int k = snprintf (tmp, sizeof tmp, "%u\n", y);
      memcpy (o[2].buf + o[2].len, tmp, (size_t) k);
      o[2].len += (size_t) k;
    }
    for (int k = 0; k < 3; k++)
      if (o[k].len >= o[k].cap)
        out_flush (&o[k]);
  }
  for (int k = 0; k < 3; k++) {
    out_flush (&o[k]);
    if (fclose (o[k].f) != 0)
      die (path[k], "close failed");
    free (o[k].buf);
  }
  if (gzclose (o[0].gz) != Z_OK)
    die (gzpath, "gzip close failed");
  fprintf (stderr, "  wrote cmp.csv (+ .gz), tw.csv, nb.csv: %zu rows x %d readings and a "
           "%d-level site, in %.1f s; tw.csv has %.1f%% zeros\n", n, CMP_P, CMP_SITES,
           now () - t0, 100.0 * (double) zeros / (double) n);
  gsl_rng_free (r);
}

static int
mode_gen (const char *dir, const char *rows)
{
  char stamp[4096], want[128], have[128] = "";
  const long long nr = strtoll (rows, NULL, 10);
  FILE *f;
  if (nr < 1000)
    die (rows, "needs a whole number of rows, at least 1000");
  snprintf (stamp, sizeof stamp, "%s/cmp.stamp", dir);
  snprintf (want, sizeof want, "version %d seed %lu rows %lld\n", CMP_VERSION, CMP_SEED, nr);
  if (!getenv ("BENCH_REGEN") && (f = fopen (stamp, "r"))) {
    if (!fgets (have, sizeof have, f))
      have[0] = '\0';
    fclose (f);
  }
  if (strcmp (have, want) == 0) {
    fprintf (stderr, "  comparer data present (%s), reused: same seed, same bytes\n", stamp);
  } else {
    remove (stamp);
    gen_sets (dir, (size_t) nr);
    if (!(f = fopen (stamp, "w")) || fputs (want, f) < 0 || fclose (f) != 0)
      die (stamp, "cannot write");
  }
  printf ("cmp.rows %lld\n", nr);
  return 0;
}

/* ---------------------------------------------------------------- time */

/* Inflate PATH with zlib's gzread into a 1 MB buffer: the machine side of a fit from gzip. */
static double
time_zlib (const char *path)
{
  static char buf[1 << 20];
  const double t0 = now ();
  gzFile gz = gzopen (path, "rb");
  int k;
  if (!gz)
    die (path, "gzopen failed");
  gzbuffer (gz, 256u * 1024u);
  while ((k = gzread (gz, buf, sizeof buf)) > 0)
    ;
  if (k < 0)
    die (path, "gzread failed");
  gzclose (gz);
  return now () - t0;
}

/* Run ARGV with stdout to OUT ("-": /dev/null) and stderr kept; TAG.s and TAG.peak_bytes
   (the child's ru_maxrss from wait4) on stdout.  A program "zlib" times time_zlib on its one
   argument instead.  Exit 1 when the command failed. */
static int
mode_time (const char *tag, const char *outpath, char **argv)
{
  struct rusage ru;
  int status;
  double t0, wall;
  pid_t pid;
  load l;
  if (strcmp (argv[0], "zlib") == 0) {
    double best = -1.0;
    warm (argv[1]);
    load_begin (&l);
    for (int r = 0; r < 3; r++) {
      const double t = time_zlib (argv[1]);
      if (best < 0.0 || t < best)
        best = t;
    }
    printf ("%s.s %.6f\n", tag, best);
    load_end (&l, tag, 1);
    return 0;
  }
  load_begin (&l);
  t0 = now ();
  if ((pid = fork ()) < 0)
    die ("fork", strerror (errno));
  if (pid == 0) {
    const int fd = open (strcmp (outpath, "-") ? outpath : "/dev/null",
                         O_WRONLY | O_CREAT | O_TRUNC, 0644);
    if (fd < 0 || dup2 (fd, STDOUT_FILENO) < 0)
      _exit (127);
    execvp (argv[0], argv);
    _exit (127);
  }
  if (wait4 (pid, &status, 0, &ru) != pid)
    die ("wait4", strerror (errno));
  wall = now () - t0;
  if (!WIFEXITED (status) || WEXITSTATUS (status) != 0) {
    fprintf (stderr, "bench_cmp: %s: '%s' failed (status %d)\n", tag, argv[0],
             WIFEXITED (status) ? WEXITSTATUS (status) : -1);
    return 1;
  }
  fprintf (stderr, "  %s: %.3f s, peak %.1f MB\n", tag, wall, 1024.0 * ru.ru_maxrss / 1e6);
  printf ("%s.s %.6f\n%s.peak_bytes %.0f\n", tag, wall, tag, 1024.0 * (double) ru.ru_maxrss);
  load_end (&l, tag, 2);
  return 0;
}

/* ---------------------------------------------------------------- report */

/* One ratio row: TAG's time over REF's, judged against HI. */
static void
ratio_row (tally *t, const results *r, const char *figure, const char *tag, const char *ref,
           const char *refname, const char *target, double hi)
{
  char k1[80], k2[80];
  snprintf (k1, sizeof k1, "%s.s", tag);
  snprintf (k2, sizeof k2, "%s.s", ref);
  row (t, figure, get (r, k1), "s", get (r, k2), refname, get (r, k1) / get (r, k2), target,
       0.0, hi);
}

static int
mode_report (const char *path)
{
  results r = results_read (path);
  tally tl = { 0, 0 };
  const double n = get (&r, "cmp.rows");
  char fig[96];
  printf ("\ncomparer, %.0fk rows (gamma-type y, %d readings and a %d-level factor)\n", n / 1e3,
          CMP_P, CMP_SITES);
  printf ("%-40s %-14s %-28s %-8s %-14s %s\n", "figure", "measured", "reference", "ratio",
          "target", "result");
  ratio_row (&tl, &r, "compare --folds 0", "c0", "gam", "s gamma/log fit", "<= 10", 10.0);
  ratio_row (&tl, &r, "compare, 10 folds", "c10", "gam", "s gamma/log fit", "<= 40", 40.0);
  ratio_row (&tl, &r, "Box-Cox, lambda estimated + interval", "bc", "ols", "s OLS fit", "<= 2",
             2.0);
  ratio_row (&tl, &r, "Tweedie, power estimated", "tw", "twg", "s gaussian/log fit", "<= 20",
             20.0);
  ratio_row (&tl, &r, "negative binomial, theta estimated", "nb", "poi", "s poisson fit", "<= 5",
             5.0);
  {
    /* from gzip: the fit's own work (the plain fit less its read, an intercept-only fit)
       plus zlib's inflate alone */
    const double own = get (&r, "gam.s") - get (&r, "read.s");
    const double ref = get (&r, "zlib.s") + own;
    row (&tl, "gamma/log fit from .csv.gz", get (&r, "gz.s"), "s", ref, "s inflate + fit work",
         get (&r, "gz.s") / ref, "<= 1.3", 0.0, 1.3);
  }
  {
    /* compare's peak against the program's own (ballast --version), the parsed columns (7
       of n doubles) twice and one n x p design (p = 1 + 5 + 5) */
    const double parsed = n * 7.0 * 8.0, design = n * 11.0 * 8.0;
    const double budget = get (&r, "base.peak_bytes") + 2.0 * parsed + design;
    const double peak = get (&r, "c0.peak_bytes");
    snprintf (fig, sizeof fig, "compare peak memory");
    row (&tl, fig, peak / 1e6, "MB", budget / 1e6, "MB base+2 cols+design", peak / budget,
         "<= 1", 0.0, 1.0);
  }
  {
    const double same_t = get (&r, "same.threads"), same_j = get (&r, "same.jobs");
    printf ("%-40s %-14s %-28s %-8s %-14s %s\n", "compare JSON, --threads 1 vs 2",
            isnan (same_t) ? "n/a" : same_t ? "identical" : "differ", "cmp", "-", "identical",
            isnan (same_t) ? "FAIL(no data)" : same_t ? "PASS" : "MISS");
    printf ("%-40s %-14s %-28s %-8s %-14s %s\n", "run folder, --jobs 1 vs 2",
            isnan (same_j) ? "n/a" : same_j ? "identical" : "differ", "diff -r", "-",
            "identical", isnan (same_j) ? "FAIL(no data)" : same_j ? "PASS" : "MISS");
    tl.fail += isnan (same_t) + isnan (same_j);
    tl.miss += (same_t == 0.0) + (same_j == 0.0);
  }
  printf ("\nalso measured: one gamma/log fit %.3f s (of which reading about %.3f s), "
          "compare --threads 1 --folds 0 %.3f s, peak of compare with 10 folds %.1f MB\n",
          get (&r, "gam.s"), get (&r, "read.s"), get (&r, "c0t1.s"),
          get (&r, "c10.peak_bytes") / 1e6);
  printf ("\n%d MISS, %d FAIL%s\n", tl.miss, tl.fail, tl.miss ? "  <-- MISS: a target was not met"
          : "");
  free (r.e);
  return tl.fail ? 1 : 0;
}

/* ---------------------------------------------------------------- main */

static void
usage (void)
{
  fputs ("usage: bench_cmp gen OUTDIR ROWS\n"
         "       bench_cmp time TAG OUT -- PROGRAM ARGS...\n"
         "       bench_cmp report RESULTS\n"
         "(run through 'make bench'; see bench/README.md)\n", stderr);
  exit (2);
}

int
main (int argc, char **argv)
{
  if (argc == 4 && strcmp (argv[1], "gen") == 0)
    return mode_gen (argv[2], argv[3]);
  if (argc >= 6 && strcmp (argv[1], "time") == 0 && strcmp (argv[4], "--") == 0)
    return mode_time (argv[2], argv[3], argv + 5);
  if (argc == 3 && strcmp (argv[1], "report") == 0)
    return mode_report (argv[2]);
  usage ();
  return 2;
}
