/* bench_irls.c -- the ballast benchmark: ingest, IRLS and memory, each beside a machine figure.

   One program with five modes, which bench/run.sh calls in separate processes so that each
   process's peak memory belongs to one task and each BLAS thread setting is fixed at start:

     bench_irls gen OUTDIR                  write the data sets (fixed seed, GSL mt19937)
     bench_irls ingest FILE                 bl_table_read on a plain CSV vs a read() loop
                                            and a hand-written parse
     bench_irls ingest-gz FILE.gz           bl_table_read on a gzip CSV vs zlib alone
     bench_irls fit FILE THREADS TAG OUTDIR gamma/log fit: seconds per iteration, peak memory,
                                            and one cblas_dsyrk (X'X) pass on the same X
     bench_irls report RESULTS OUTDIR       the final table from the collected figures
     bench_irls idle MAXWAIT                wait (at most MAXWAIT s) until the machine is quiet

   The measuring modes write "KEY VALUE" lines on stdout (run.sh collects them) and a
   readable account on stderr.  Every time is wall time from clock_gettime (CLOCK_MONOTONIC).
   The data are an invented pump-fleet scenario: x1..xP are sensor readings, y the repair
   hours, drawn from a gamma distribution whose log mean is linear in the readings. */
#define _GNU_SOURCE                /* dladdr */
#include <dlfcn.h>
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
#include <gsl/gsl_cblas.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>
#include <zlib.h>
#include "bench_util.h"
#include "design.h"
#include "fit.h"
#include "irls.h"
#include "table.h"
#include "terms.h"

#define GEN_SEED 20240611UL        /* the one seed of every data set */
#define GEN_VERSION 1              /* bump when the generator changes: old files are remade */
#define GAMMA_SHAPE 2.5            /* gamma shape nu: dispersion phi = 1 / nu = 0.4 */
#define ROWS_BIG 2000000
#define ROWS_LIN 200000
#define ROWS_P50 400000
#define MAX_ITER_TIMES 256

/* ---------------------------------------------------------------- gen */


/*
 * One data set: N rows, P readings.  Reading j is m_j + s_j u with u standard normal (odd j)
 * or uniform on (-1.7, 1.7) (even j), and coefficient c_j / s_j, so every reading moves the
 * log mean by about c_j standard deviations; y ~ Gamma(shape nu, scale mu / nu) has mean
 * mu = exp(eta) and variance phi mu^2 with phi = 1 / nu (the gamma/log model; McCullagh &
 * Nelder 1989, Generalized Linear Models, 2nd ed., section 8.1).
 */
static void
gen_set (const char *path, const char *gzpath, size_t n, size_t p, double c)
{
  gsl_rng *r = gsl_rng_alloc (gsl_rng_mt19937);
  out o = { NULL, NULL, NULL, 0, 1u << 20, path };
  double *m = malloc (p * sizeof *m), *s = malloc (p * sizeof *s), *b = malloc (p * sizeof *b);
  char tmp[64];
  const double t0 = now ();
  if (!r || !m || !s || !b || !(o.buf = malloc (o.cap + 4096)))
    die ("gen", "out of memory");
  gsl_rng_set (r, GEN_SEED + p);
  if (!(o.f = fopen (path, "w")))
    die (path, strerror (errno));
  if (gzpath) {
    if (!(o.gz = gzopen (gzpath, "wb1")))
      die (gzpath, "cannot open for writing");
    gzbuffer (o.gz, 1u << 20);
  }
  for (size_t j = 0; j < p; j++) {
    m[j] = 5.0 * gsl_rng_uniform (r) - 1.5;
    s[j] = 0.5 + 2.5 * gsl_rng_uniform (r);
    b[j] = ((j % 2) ? -c : c) * (0.6 + 0.8 * gsl_rng_uniform (r)) / s[j];
  }
  for (size_t j = 0; j < p; j++) {
    const int k = snprintf (tmp, sizeof tmp, "x%zu,", j + 1);
    memcpy (o.buf + o.len, tmp, (size_t) k);
    o.len += (size_t) k;
  }
  memcpy (o.buf + o.len, "y\n", 2);
  o.len += 2;
  for (size_t i = 0; i < n; i++) {
    double eta = 0.7;
    for (size_t j = 0; j < p; j++) {
      const double u = (j % 2 == 0) ? gsl_ran_gaussian_ziggurat (r, 1.0)
                                    : gsl_ran_flat (r, -1.7, 1.7);
      const double x = m[j] + s[j] * u;
      const double xr = (double) llround (x * 1e4) / 1e4;   /* the value as written */
      eta += b[j] * xr;
      put_fixed4 (&o, x);
      o.buf[o.len++] = ',';
    }
    {
      const double mu = exp (eta);
      const double y = gsl_ran_gamma (r, GAMMA_SHAPE, mu / GAMMA_SHAPE);
      const int k = snprintf (tmp, sizeof tmp, "%.6g\n", y > 1e-300 ? y : 1e-300);
      memcpy (o.buf + o.len, tmp, (size_t) k);
      o.len += (size_t) k;
    }
    if (o.len >= o.cap)
      out_flush (&o);
  }
  out_flush (&o);
  if (fclose (o.f) != 0)
    die (path, "close failed");
  if (o.gz && gzclose (o.gz) != Z_OK)
    die (gzpath, "gzip close failed");
  fprintf (stderr, "  wrote %s (%zu rows x %zu readings, %.1f MB%s) in %.1f s\n", path, n, p,
           file_bytes (path) / 1e6, gzpath ? ", and its gzip -1 copy" : "", now () - t0);
  free (o.buf);
  free (m);
  free (s);
  free (b);
  gsl_rng_free (r);
}

static int
mode_gen (const char *dir)
{
  const size_t nbig = env_size ("BENCH_ROWS", ROWS_BIG);
  const size_t nlin = env_size ("BENCH_LIN_ROWS", ROWS_LIN);
  const size_t n50 = env_size ("BENCH_P50_ROWS", ROWS_P50);
  char stamp[4096], want[256], have[256] = "", pb[4096], pg[4096], pl[4096], p5[4096];
  FILE *f;
  snprintf (stamp, sizeof stamp, "%s/gen.stamp", dir);
  snprintf (pb, sizeof pb, "%s/big.csv", dir);
  snprintf (pg, sizeof pg, "%s/big.csv.gz", dir);
  snprintf (pl, sizeof pl, "%s/lin.csv", dir);
  snprintf (p5, sizeof p5, "%s/p50.csv", dir);
  snprintf (want, sizeof want, "version %d seed %lu rows %zu %zu %zu\n", GEN_VERSION, GEN_SEED,
            nbig, nlin, n50);
  if (!getenv ("BENCH_REGEN") && (f = fopen (stamp, "r"))) {
    if (!fgets (have, sizeof have, f))
      have[0] = '\0';
    fclose (f);
  }
  if (strcmp (have, want) == 0 && access (pb, R_OK) == 0 && access (pg, R_OK) == 0
      && access (pl, R_OK) == 0 && access (p5, R_OK) == 0) {
    fprintf (stderr, "  data sets present (%s), reused: same seed, same bytes\n", stamp);
  } else {
    remove (stamp);
    gen_set (pb, pg, nbig, 10, 0.15);
    gen_set (pl, NULL, nlin, 10, 0.15);
    gen_set (p5, NULL, n50, 50, 0.07);
    if (!(f = fopen (stamp, "w")) || fputs (want, f) < 0 || fclose (f) != 0)
      die (stamp, "cannot write");
  }
  printf ("gen.rows_big %zu\ngen.rows_lin %zu\ngen.rows_p50 %zu\n", nbig, nlin, n50);
  printf ("gen.bytes_big %.0f\ngen.bytes_gz %.0f\n", file_bytes (pb), file_bytes (pg));
  return 0;
}

/* ---------------------------------------------------------------- idle */

/* Wait until the rest of the machine is quiet: two consecutive half-second windows in which
   other processes use under 5% of the cores, for at most MAXWAIT seconds.  Prints how long it
   waited; a step run on a busy machine is flagged by load_end anyway. */
static int
mode_idle (const char *maxwait_s)
{
  const double maxwait = strtod (maxwait_s, NULL), t0 = now ();
  const long ncpu = sysconf (_SC_NPROCESSORS_ONLN);
  const struct timespec half = { 0, 500000000L };
  int quiet = 0;
  double other = 0.0;
  while (quiet < 2 && now () - t0 < maxwait) {
    const double b0 = machine_busy (), w0 = now ();
    nanosleep (&half, NULL);
    if (b0 < 0.0 || ncpu < 1)
      return 0;
    other = (machine_busy () - b0) / ((now () - w0) * (double) ncpu);
    quiet = other < 0.05 ? quiet + 1 : 0;
  }
  if (quiet < 2)
    fprintf (stderr, "  machine still busy after %.0f s (others used %.0f%% of it in the last "
             "half second): measuring anyway\n", maxwait, 100.0 * other);
  else if (now () - t0 > 1.5)
    fprintf (stderr, "  waited %.0f s for other work on the machine to finish\n", now () - t0);
  return 0;
}

/* ---------------------------------------------------------------- ingest */

static double
time_table_read (const char *path, size_t *nrows, size_t *ncols)
{
  bl_err err = { 0 };
  const double t0 = now ();
  bl_table *t = bl_table_read (path, NULL, &err);
  const double dt = now () - t0;
  if (!t) {
    fprintf (stderr, "bench_irls: %s: %s\n", err.where, err.msg);
    exit (1);
  }
  *nrows = bl_table_nrows (t);
  *ncols = bl_table_ncols (t);
  bl_table_free (t);
  return dt;
}

/* The machine's plain read: read() of PATH in 1 MB pieces into one buffer, every byte copied
   out of the page cache (a 'cat > /dev/null' may copy nothing: splice). */
static double
time_read_loop (const char *path, double *nbytes)
{
  static char buf[1 << 20];
  const double t0 = now ();
  const int fd = open (path, O_RDONLY);
  ssize_t k;
  double total = 0.0;
  unsigned sum = 0;
  if (fd < 0)
    die (path, strerror (errno));
  while ((k = read (fd, buf, sizeof buf)) > 0) {
    total += (double) k;
    sum += (unsigned char) buf[k - 1];       /* the bytes are used */
  }
  close (fd);
  if (k < 0)
    die (path, strerror (errno));
  *nbytes = total + 0.0 * sum;
  return now () - t0;
}

/* The hand-written parse reference: one thread reads PATH as above and turns each field of a
   plain numeric CSV (a header line, then [-]digits[.digits][e[+-]digits] fields, ',' and
   '\n' separated) into a double stored in its column, the least a reader must do.  The
   decimal conversion is the short one (mantissa times a power of ten: not correctly rounded,
   which bl_table_read is), so the reference is, if anything, fast.  Returns the wall time;
   *NROWS and *NCOLS are what it found. */
static double
time_hand_parse (const char *path, size_t *nrows, size_t *ncols)
{
  static char buf[1 << 20];
  static const double p10[] = { 1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11,
                                1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21,
                                1e22 };
  const double t0 = now ();
  const int fd = open (path, O_RDONLY);
  double **col = NULL;
  size_t nc = 1, cap = 0, r = 0, j = 0;
  int header = 1, neg = 0, frac = -1, eneg = 0, inexp = 0, ex = 0;
  unsigned long long mant = 0;
  ssize_t k;
  if (fd < 0)
    die (path, strerror (errno));
  while ((k = read (fd, buf, sizeof buf)) > 0) {
    for (ssize_t i = 0; i < k; i++) {
      const char c = buf[i];
      if (header) {
        if (c == ',')
          nc++;
        else if (c == '\n') {
          header = 0;
          if (!(col = calloc (nc, sizeof *col)))
            die ("hand parse", "out of memory");
        }
        continue;
      }
      if (c >= '0' && c <= '9') {
        if (inexp)
          ex = 10 * ex + (c - '0');
        else {
          mant = 10 * mant + (unsigned long long) (c - '0');
          if (frac >= 0)
            frac++;
        }
      } else if (c == '.') {
        frac = 0;
      } else if (c == '-') {
        if (inexp)
          eneg = 1;
        else
          neg = 1;
      } else if (c == 'e' || c == 'E') {
        inexp = 1;
      } else if (c == ',' || c == '\n') {
        int e10 = (inexp ? (eneg ? -ex : ex) : 0) - (frac > 0 ? frac : 0);
        double v = (double) mant;
        if (e10 < 0)
          v /= p10[-e10 < 22 ? -e10 : 22];
        else if (e10 > 0)
          v *= p10[e10 < 22 ? e10 : 22];
        if (r == cap) {
          cap = cap ? 2 * cap : 1u << 16;
          for (size_t q = 0; q < nc; q++)
            if (!(col[q] = realloc (col[q], cap * sizeof **col)))
              die ("hand parse", "out of memory");
        }
        if (j < nc)
          col[j][r] = neg ? -v : v;
        j++;
        if (c == '\n') {
          r++;
          j = 0;
        }
        mant = 0;
        neg = eneg = inexp = ex = 0;
        frac = -1;
      }
    }
  }
  close (fd);
  if (k < 0)
    die (path, strerror (errno));
  *nrows = r;
  *ncols = nc;
  for (size_t q = 0; col && q < nc; q++)
    free (col[q]);
  free (col);
  return now () - t0;
}

static int
mode_ingest (const char *path)
{
  const double bytes = file_bytes (path);
  double t_loop = -1.0, t_hand = -1.0, t_read = -1.0, got = 0.0;
  size_t nr = 0, nc = 0, hr = 0, hc = 0;
  load l;
  warm (path);
  load_begin (&l);
  for (int r = 0; r < 3; r++) {
    const double t = time_read_loop (path, &got);
    if (t_loop < 0.0 || t < t_loop)
      t_loop = t;
  }
  for (int r = 0; r < 2; r++) {
    const double t = time_hand_parse (path, &hr, &hc);
    if (t_hand < 0.0 || t < t_hand)
      t_hand = t;
  }
  for (int r = 0; r < 2; r++) {
    const double t = time_table_read (path, &nr, &nc);
    if (t_read < 0.0 || t < t_read)
      t_read = t;
  }
  if (hr != nr || hc != nc)
    fprintf (stderr, "  warning: the hand parse found %zu x %zu, bl_table_read %zu x %zu\n", hr,
             hc, nr, nc);
  fprintf (stderr, "  %s: %.1f MB, %zu rows x %zu columns\n", path, bytes / 1e6, nr, nc);
  fprintf (stderr, "  read() loop: %.3f s (%.0f MB/s); hand-written parse, 1 thread: %.3f s "
           "(%.0f MB/s); bl_table_read: %.3f s (%.1f MB/s) (best of 3, 2 and 2, page cache "
           "warm)\n", t_loop, bytes / 1e6 / t_loop, t_hand, bytes / 1e6 / t_hand, t_read,
           bytes / 1e6 / t_read);
  printf ("ingest.bytes %.0f\ningest.loop_s %.6f\ningest.hand_s %.6f\ningest.read_s %.6f\n",
          bytes, t_loop, t_hand, t_read);
  load_end (&l, "ingest", 2);
  return 0;
}

/* Inflate PATH with zlib's gzread into a 1 MB buffer and drop the bytes. */
static double
time_zlib (const char *path, double *outbytes)
{
  static char buf[1 << 20];
  const double t0 = now ();
  gzFile gz = gzopen (path, "rb");
  int k;
  double total = 0.0;
  if (!gz)
    die (path, "gzopen failed");
  gzbuffer (gz, 256u * 1024u);
  while ((k = gzread (gz, buf, sizeof buf)) > 0)
    total += k;
  if (k < 0)
    die (path, "gzread failed");
  gzclose (gz);
  *outbytes = total;
  return now () - t0;
}

static int
mode_ingest_gz (const char *path)
{
  char *gz_argv[] = { "gzip", "-dc", (char *) path, NULL };
  const double bytes = file_bytes (path);
  double t_zlib = -1.0, t_gzip, t_read = -1.0, raw = 0.0;
  size_t nr = 0, nc = 0;
  load l;
  warm (path);
  load_begin (&l);
  for (int r = 0; r < 3; r++) {
    const double t = time_zlib (path, &raw);
    if (t_zlib < 0.0 || t < t_zlib)
      t_zlib = t;
  }
  t_gzip = best_cmd (gz_argv, 2);
  for (int r = 0; r < 2; r++) {
    const double t = time_table_read (path, &nr, &nc);
    if (t_read < 0.0 || t < t_read)
      t_read = t;
  }
  fprintf (stderr, "  %s: %.1f MB compressed, %.1f MB inflated\n", path, bytes / 1e6,
           raw / 1e6);
  fprintf (stderr, "  zlib gzread loop: %.3f s; gzip -dc > /dev/null: %.3f s; bl_table_read: "
           "%.3f s (best of 3, 2, 2)\n", t_zlib, t_gzip, t_read);
  printf ("gz.bytes %.0f\ngz.raw_bytes %.0f\ngz.zlib_s %.6f\ngz.gzip_s %.6f\ngz.read_s %.6f\n",
          bytes, raw, t_zlib, t_gzip, t_read);
  load_end (&l, "gz", 1);
  return 0;
}

/* ---------------------------------------------------------------- fit */

static void
design_fill (const void *ctx, size_t row0, size_t nr, double *o, size_t ld)
{
  bl_design_fill (ctx, row0, nr, o, ld);
}

static void
fail_err (const bl_err *e)
{
  fprintf (stderr, "bench_irls: %s: %s\n", e->where, e->msg);
  exit (1);
}

/* Name of the shared object that provides cblas_dsyrk in this process. */
static const char *
blas_name (void)
{
  Dl_info info;
  if (dladdr ((void *) cblas_dsyrk, &info) && info.dli_fname)
    return info.dli_fname;
  return "unknown";
}

static int
mode_fit (const char *path, unsigned threads, const char *tag, const char *dir)
{
  bl_err err = { 0 };
  bl_table *t;
  bl_terms *terms;
  bl_design *d;
  bl_design_opts dopt;
  bl_fit_opts fopt;
  bl_fit *fit;
  const bl_fit_stats *st;
  bl_irls_model m;
  bl_irls_work *ws;
  char *text, binpath[4096];
  double t0, t_read, t_design, t_fit, hwm_fit, parsed, t_init, t_fin, iters[MAX_ITER_TIMES];
  double *X, *C, t_syrk = -1.0, med, base_rss;
  size_t nit = 0, n, p, ncolnum = 0, len;
  FILE *f;
  int s;
  load l;

  base_rss = cur_rss ();
  t0 = now ();
  if (!(t = bl_table_read (path, NULL, &err)))
    fail_err (&err);
  t_read = now () - t0;
  for (size_t j = 0; j < bl_table_ncols (t); j++)
    ncolnum += bl_table_is_numeric (t, j) != 0;
  parsed = (double) bl_table_nrows (t) * (double) ncolnum * 8.0;

  /* terms "x1, x2, ..., xP": every column but the response */
  len = 8 * bl_table_ncols (t) + 1;
  if (!(text = malloc (len)))
    die ("fit", "out of memory");
  text[0] = '\0';
  for (size_t j = 0; j + 1 < bl_table_ncols (t); j++) {
    if (j)
      strcat (text, ", ");
    strcat (text, bl_table_colname (t, j));
  }
  t0 = now ();
  if (!(terms = bl_terms_parse (text, "bench terms", &err)))
    fail_err (&err);
  bl_design_opts_init (&dopt);
  if (!(d = bl_design_new (t, "y", terms, &dopt, &err)))
    fail_err (&err);
  t_design = now () - t0;
  n = bl_design_n (d);
  p = bl_design_p (d);

  /* 1. the whole fit, as a user runs it */
  bl_fit_opts_init (&fopt);
  fopt.fam = &bl_family_gamma;
  fopt.link = &bl_link_log;
  fopt.irls.threads = threads;
  t0 = now ();
  fit = bl_fit_new (d, &fopt, &err);
  t_fit = now () - t0;
  if (!fit)
    fail_err (&err);
  st = bl_fit_stats_get (fit);
  if (!st->converged)
    fail_err (bl_fit_status (fit));
  hwm_fit = peak_rss ();
  snprintf (binpath, sizeof binpath, "%s/%s.bin", dir, tag);
  if (!(f = fopen (binpath, "wb")) || fwrite (bl_fit_beta (fit), sizeof (double), p, f) != p
      || fwrite (&st->deviance, sizeof (double), 1, f) != 1 || fclose (f) != 0)
    die (binpath, "cannot write");
  fprintf (stderr, "  %s, threads %u: %zu rows x %zu columns of X; read %.2f s, design %.2f s; "
           "bl_fit_new %.2f s, %zu iterations, %zu halvings, solver %s, deviance %.10g\n",
           path, threads, n, p, t_read, t_design, t_fit, st->iterations, st->halvings,
           st->solver, st->deviance);
  fprintf (stderr, "  peak memory after the fit %.1f MB (at start %.1f MB); parsed numeric "
           "columns %.1f MB\n", hwm_fit / 1e6, base_rss / 1e6, parsed / 1e6);
  printf ("%s.n %zu\n%s.p %zu\n%s.fit_s %.6f\n%s.iterations %zu\n%s.halvings %zu\n", tag, n,
          tag, p, tag, t_fit, tag, st->iterations, tag, st->halvings);
  printf ("%s.peak_bytes %.0f\n%s.parsed_bytes %.0f\n%s.read_s %.6f\n%s.solver %s\n", tag,
          hwm_fit, tag, parsed, tag, t_read, tag, st->solver);
  /* the summary figures' share of the fit: the dispersion MLE and the log-likelihood, timed
     alone on the fit's own means (the same calls bl_fit_new makes after IRLS) */
  {
    double phi = NAN, t_phi, t_ll;
    t0 = now ();
    if (bl_family_phi_ml (&bl_family_gamma, bl_design_y (d), bl_fit_mu (fit),
                          bl_design_prior_w (d), n, st->deviance, &phi, &err) != BL_OK)
      fail_err (&err);
    t_phi = now () - t0;
    t0 = now ();
    (void) bl_family_loglik (&bl_family_gamma, bl_design_y (d), bl_fit_mu (fit),
                             bl_design_prior_w (d), n, phi);
    t_ll = now () - t0;
    fprintf (stderr, "  inside bl_fit_new: bl_family_phi_ml %.3f s, bl_family_loglik %.3f s\n",
             t_phi, t_ll);
    printf ("%s.phi_ml_s %.6f\n%s.loglik_s %.6f\n", tag, t_phi, tag, t_ll);
  }
  bl_fit_free (fit);

  /* 2. the same IRLS driven step by step: the time of each ITERATE alone */
  bl_irls_opts irls_opt = fopt.irls;
  m.fam = &bl_family_gamma;
  m.link = &bl_link_log;
  m.n = n;
  m.p = p;
  m.y = bl_design_y (d);
  m.offset = bl_design_offset (d);
  m.prior_w = bl_design_prior_w (d);
  m.fill = design_fill;
  m.fill_ld = NULL;
  m.ctx = d;
  m.intercept = bl_design_has_intercept (d);
  if (!(ws = bl_irls_work_new (&m, &irls_opt, &err)))
    fail_err (&err);
  load_begin (&l);                   /* the judged region: step-by-step IRLS and dsyrk */
  t0 = now ();
  s = bl_irls_init (ws, &err);
  t_init = now () - t0;
  while (s == BL_OK && nit < irls_opt.max_iter && nit < MAX_ITER_TIMES) {
    t0 = now ();
    s = bl_irls_iterate (ws, &err);
    iters[nit++] = now () - t0;
    if (s == BL_OK && bl_irls_test (ws) == BL_OK)
      break;
  }
  if (s != BL_OK)
    fail_err (&err);
  t0 = now ();
  if (bl_irls_finish (ws, &err) != BL_OK)
    fail_err (&err);
  t_fin = now () - t0;
  bl_irls_work_free (ws);
  qsort (iters, nit, sizeof *iters, cmp_double);
  med = (nit % 2) ? iters[nit / 2] : 0.5 * (iters[nit / 2 - 1] + iters[nit / 2]);
  fprintf (stderr, "  bl_irls step by step: init %.3f s, %zu iterates (median %.4f s, min "
           "%.4f, max %.4f), finish %.3f s\n", t_init, nit, med, iters[0], iters[nit - 1],
           t_fin);
  {
    double tot = t_init + t_fin;
    for (size_t k = 0; k < nit; k++)
      tot += iters[k];
    printf ("%s.iter_s %.6f\n%s.iter_min_s %.6f\n%s.init_s %.6f\n%s.irls_total_s %.6f\n", tag,
            med, tag, iters[0], tag, t_init, tag, tot);
  }

  /* 3. the machine figure: one cblas_dsyrk C = X'X over the same n x p matrix */
  X = malloc (n * p * sizeof *X);
  C = calloc (p * p, sizeof *C);
  if (!X || !C)
    die ("dsyrk", "out of memory for X");
  bl_design_fill (d, 0, n, X, n);
  for (int r = 0; r < 4; r++) {          /* the first call also warms the BLAS up */
    t0 = now ();
    cblas_dsyrk (CblasColMajor, CblasUpper, CblasTrans, (int) p, (int) n, 1.0, X, (int) n,
                 0.0, C, (int) p);
    if (r > 0 && (t_syrk < 0.0 || now () - t0 < t_syrk))
      t_syrk = now () - t0;
  }
  fprintf (stderr, "  cblas_dsyrk X'X (%zu x %zu) from %s, OPENBLAS_NUM_THREADS=%s: %.4f s "
           "(best of 3)\n", n, p, blas_name (), getenv ("OPENBLAS_NUM_THREADS")
           ? getenv ("OPENBLAS_NUM_THREADS") : "(unset)", t_syrk);
  printf ("%s.syrk_s %.6f\n", tag, t_syrk);
  load_end (&l, tag, threads);
  free (X);
  free (C);
  free (text);
  bl_design_free (d);
  bl_terms_free (terms);
  bl_table_free (t);
  return 0;
}

/* ---------------------------------------------------------------- report */


static int
same_bytes (const char *dir, const char *a, const char *b, size_t *nbytes)
{
  char pa[4096], pb[4096], ba[8192], bb[8192];
  FILE *fa, *fb;
  size_t na = 0, nb = 0;
  snprintf (pa, sizeof pa, "%s/%s.bin", dir, a);
  snprintf (pb, sizeof pb, "%s/%s.bin", dir, b);
  if ((fa = fopen (pa, "rb"))) {
    na = fread (ba, 1, sizeof ba, fa);
    fclose (fa);
  }
  if ((fb = fopen (pb, "rb"))) {
    nb = fread (bb, 1, sizeof bb, fb);
    fclose (fb);
  }
  *nbytes = na;
  if (!fa || !fb || na == 0)
    return -1;
  return na == nb && memcmp (ba, bb, na) == 0;
}

static int
mode_report (const char *path, const char *dir)
{
  results r = results_read (path);
  tally tl = { 0, 0 };
  size_t nb = 0;
  char fig[96];
  int same;
  double v, ref;

  printf ("\n%-40s %-14s %-28s %-8s %-14s %s\n", "figure", "measured", "reference", "ratio",
          "target", "result");
  printf ("%-40s %-14s %-28s %-8s %-14s %s\n", "------", "--------", "---------", "-----",
          "------", "------");
  /* ingest: against a read() loop (the bytes copied, nothing parsed) and against the
     hand-written one-thread parse into columns */
  {
    const double mb = get (&r, "ingest.bytes") / 1e6;
    const double rd = mb / get (&r, "ingest.read_s"), lp = mb / get (&r, "ingest.loop_s");
    const double hp = mb / get (&r, "ingest.hand_s");
    (void) lp;                      /* printed under "also measured": not a parse target */
    row (&tl, "plain ingest, bl_table_read", rd, "MB/s", hp, "MB/s hand parse 1 thr", rd / hp,
         ">= 1", 1.0, INFINITY);
  }
  v = get (&r, "gz.read_s");
  ref = get (&r, "gz.zlib_s");
  row (&tl, "gzip ingest, bl_table_read", v, "s", ref, "s zlib inflate", v / ref, "<= 1.5", 0.0,
       1.5);
  /* IRLS */
  snprintf (fig, sizeof fig, "IRLS s/iter %.0fk x %.0f, threads 2", get (&r, "big_t2.n") / 1e3,
            get (&r, "big_t2.p"));
  v = get (&r, "big_t2.iter_s");
  ref = get (&r, "big_t2.syrk_s");
  row (&tl, fig, v, "s", ref, "s dsyrk 2 thr", v / ref, "<= 2.5", 0.0, 2.5);
  snprintf (fig, sizeof fig, "IRLS s/iter %.0fk x %.0f, threads 2", get (&r, "p50_t2.n") / 1e3,
            get (&r, "p50_t2.p"));
  v = get (&r, "p50_t2.iter_s");
  ref = get (&r, "p50_t2.syrk_s");
  row (&tl, fig, v, "s", ref, "s dsyrk 2 thr", v / ref, "<= 2.5", 0.0, 2.5);
  /* memory */
  v = get (&r, "big_t2.peak_bytes") / 1e6;
  ref = get (&r, "big_t2.parsed_bytes") / 1e6;
  row (&tl, "peak memory, read + design + fit", v, "MB", ref, "MB parsed cols", v / ref, "<= 2",
       0.0, 2.0);
  /* linearity: time ratio over row ratio, 1 +- 0.15 */
  {
    const double rows = get (&r, "big_t2.n") / get (&r, "lin_t2.n");
    const double tr = get (&r, "big_t2.iter_s") / get (&r, "lin_t2.iter_s");
    snprintf (fig, sizeof fig, "linearity: s/iter %.0fk / %.0fk rows", get (&r, "big_t2.n") / 1e3,
              get (&r, "lin_t2.n") / 1e3);
    row (&tl, fig, tr, "x", rows, "x rows", tr / rows, "1 +- 0.15", 0.85, 1.15);
    if (get_s (&r, "lin_t2.solver") && get_s (&r, "big_t2.solver")
        && strcmp (get_s (&r, "lin_t2.solver"), get_s (&r, "big_t2.solver")) != 0)
      printf ("  (the two fits used different solvers, %s and %s: not comparable)\n",
              get_s (&r, "big_t2.solver"), get_s (&r, "lin_t2.solver"));
  }
  /* determinism */
  same = same_bytes (dir, "big_t1", "big_t2", &nb);
  printf ("%-40s %-14s %-28s %-8s %-14s %s\n", "beta + deviance, threads 1 vs 2",
          same < 0 ? "n/a" : same ? "identical" : "differ", "memcmp", "-", "identical",
          same < 0 ? "FAIL(no data)" : same ? "PASS" : "MISS");
  if (same < 0)
    tl.fail++;
  else if (!same)
    tl.miss++;

  printf ("\nalso measured (not judged):\n");
  printf ("  read() loop of the plain CSV (bytes copied, nothing parsed): %.0f MB/s; "
          "bl_table_read reaches %.3f of it\n", get (&r, "ingest.bytes") / 1e6
          / get (&r, "ingest.loop_s"), get (&r, "ingest.loop_s") / get (&r, "ingest.read_s"));
  printf ("  gzip -dc > /dev/null %.3f s (gzip ingest / gzip -dc = %.2f)\n",
          get (&r, "gz.gzip_s"), get (&r, "gz.read_s") / get (&r, "gz.gzip_s"));
  printf ("  bl_fit_new wall: %.2f s threads 2, %.2f s threads 1 (%g iterations, %g halvings),"
          " solver %s\n", get (&r, "big_t2.fit_s"), get (&r, "big_t1.fit_s"),
          get (&r, "big_t2.iterations"), get (&r, "big_t2.halvings"),
          get_s (&r, "big_t2.solver") ? get_s (&r, "big_t2.solver") : "?");
  printf ("  bl_fit_new wall / iterations: %.3f s threads 2 (includes init, finish, summary)\n",
          get (&r, "big_t2.fit_s") / get (&r, "big_t2.iterations"));
  printf ("  bl_fit_new threads 2 outside IRLS (init + iterates + finish = %.3f s): %.3f s, of "
          "which bl_family_phi_ml %.3f s and bl_family_loglik %.3f s\n",
          get (&r, "big_t2.irls_total_s"), get (&r, "big_t2.fit_s") - get (&r,
          "big_t2.irls_total_s"), get (&r, "big_t2.phi_ml_s"), get (&r, "big_t2.loglik_s"));
  printf ("  thread speedup of one iteration: %.2fx (1 thread / 2 threads)\n",
          get (&r, "big_t1.iter_s") / get (&r, "big_t2.iter_s"));
  printf ("  IRLS s/iter %.0fk x %.0f on one thread: %.4g s, %.2fx one dsyrk on one thread "
          "(%.4g s; the target is for both cores: dsyrk reads X at memory speed and does not "
          "scale, the Householder passes do 2np^2 flops and do)\n", get (&r, "big_t1.n") / 1e3,
          get (&r, "big_t1.p"), get (&r, "big_t1.iter_s"),
          get (&r, "big_t1.iter_s") / get (&r, "big_t1.syrk_s"), get (&r, "big_t1.syrk_s"));
  printf ("  p = 50 fit: %g iterations, bl_fit_new %.2f s; %.0fk rows, not 2M, to keep the "
          "run short\n", get (&r, "p50_t2.iterations"), get (&r, "p50_t2.fit_s"),
          get (&r, "p50_t2.n") / 1e3);
  printf ("  peak memory: threads 1 %.1f MB; 200k-row fit %.1f MB; p = 50 fit %.1f MB "
          "(%.2f x its parsed columns)\n", get (&r, "big_t1.peak_bytes") / 1e6,
          get (&r, "lin_t2.peak_bytes") / 1e6, get (&r, "p50_t2.peak_bytes") / 1e6,
          get (&r, "p50_t2.peak_bytes") / get (&r, "p50_t2.parsed_bytes"));
  {
    double worst = -1.0;
    const char *where = "";
    int disturbed = 0;
    for (size_t i = 0; i < r.n; i++) {
      const char *dot = strrchr (r.e[i].key, '.');
      if (dot && strcmp (dot, ".others_cpu") == 0 && strtod (r.e[i].val, NULL) > worst) {
        worst = strtod (r.e[i].val, NULL);
        where = r.e[i].key;
      }
      if (dot && strcmp (dot, ".disturbed") == 0 && strcmp (r.e[i].val, "1") == 0)
        disturbed = 1;
    }
    if (worst >= 0.0)
      printf ("  other work on the machine: at most %.0f%% of its cores (%.*s)%s\n",
              100.0 * worst, (int) (strlen (where) - strlen (".others_cpu")), where,
              disturbed ? "  <-- NOT IDLE: some figures above are not reliable" : "");
  }
  printf ("\n%d MISS, %d FAIL%s\n", tl.miss, tl.fail, tl.miss ? "  <-- MISS: a target was not met"
          : "");
  free (r.e);
  return tl.fail ? 1 : 0;
}

/* ---------------------------------------------------------------- main */

static void
usage (void)
{
  fputs ("usage: bench_irls gen OUTDIR\n"
         "       bench_irls ingest FILE\n"
         "       bench_irls ingest-gz FILE.gz\n"
         "       bench_irls fit FILE THREADS TAG OUTDIR\n"
         "       bench_irls report RESULTS OUTDIR\n"
         "       bench_irls idle MAXWAIT_SECONDS\n"
         "(run through 'make bench'; see bench/README.md)\n", stderr);
  exit (2);
}

int
main (int argc, char **argv)
{
  gsl_set_error_handler_off ();
  if (argc == 3 && strcmp (argv[1], "gen") == 0)
    return mode_gen (argv[2]);
  if (argc == 3 && strcmp (argv[1], "idle") == 0)
    return mode_idle (argv[2]);
  if (argc == 3 && strcmp (argv[1], "ingest") == 0)
    return mode_ingest (argv[2]);
  if (argc == 3 && strcmp (argv[1], "ingest-gz") == 0)
    return mode_ingest_gz (argv[2]);
  if (argc == 6 && strcmp (argv[1], "fit") == 0) {
    const long th = strtol (argv[3], NULL, 10);
    if (th < 1 || th > 2)
      usage ();
    return mode_fit (argv[2], (unsigned) th, argv[4], argv[5]);
  }
  if (argc == 4 && strcmp (argv[1], "report") == 0)
    return mode_report (argv[2], argv[3]);
  usage ();
  return 2;
}
