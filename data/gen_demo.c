/* gen_demo.c -- writes ballast's invented demo data: a fleet of centrifugal pumps at six sites.

   pumps.csv holds repair jobs (repair hours, gamma with a log-linear mean and constant shape;
   parts cost, inverse gaussian with a log-linear mean), stops.csv holds site-month records of
   unplanned stops (Poisson with operating-hours exposure and a gamma frailty).  The scenario,
   every column and the true parameter values are described in data/README.md; the constants
   below are those values and must stay in step with it.

   Usage: gen_demo [--seed N] pumps|stops        write one file to stdout
          gen_demo [--seed N] PUMPS.csv STOPS.csv write both files
   The pumps file draws from gsl_rng_mt19937 seeded with N (default 20261201), the stops file
   from a second generator seeded with N + 1, so each file can be made on its own.

   Covariates are rounded to the precision they are printed with before they enter a mean, so
   the generating model holds exactly for the numbers in the files.  All output uses fixed,
   modest precision so that it is the same on every platform.

   Build: gcc -std=c99 -O2 data/gen_demo.c $(pkg-config --cflags --libs gsl) -o gen_demo */

#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>

#define DEFAULT_SEED 20261201UL
#define N_SITES 6
#define N_DUTY 3
#define N_JOBS 3000
#define FIRST_YEAR 1993
#define N_MONTHS 400                      /* 1993-01 .. 2026-04; 6 x 400 = 2400 records */

static const char *const site_name[N_SITES] = {
  "north-quay", "kiln-road", "mill-lane", "eastern-wharf", "salt-marsh", "quarry-top"
};
static const char *const duty_name[N_DUTY] = { "light", "standard", "heavy" };

/* Share of jobs per site (sums to 1) and per duty class. */
static const double site_share[N_SITES] = { 0.22, 0.18, 0.15, 0.20, 0.13, 0.12 };
static const double duty_share[N_DUTY] = { 0.30, 0.45, 0.25 };

/* Load range (percent of rated flow) by duty class: uniform on [lo, hi]. */
static const double load_lo[N_DUTY] = { 20.0, 40.0, 60.0 };
static const double load_hi[N_DUTY] = { 65.0, 85.0, 105.0 };

/* repair_hours ~ gamma(shape REPAIR_SHAPE, mean mu), log mu = REPAIR_B0 + REPAIR_AGE age
   + REPAIR_LOAD load_pct + repair_site[site]; duty and hours_since_service have no effect. */
#define REPAIR_SHAPE 3.0
#define REPAIR_B0 0.9
#define REPAIR_AGE 0.045
#define REPAIR_LOAD 0.012
static const double repair_site[N_SITES] = { 0.0, 0.15, -0.10, 0.25, -0.20, 0.05 };

/* parts_cost ~ inverse gaussian(mean m, dispersion COST_PHI: Var = COST_PHI m^3),
   log m = COST_B0 + cost_duty[duty] + COST_SERVICE hours_since_service + COST_AGE age. */
#define COST_PHI 0.001
#define COST_B0 4.6
#define COST_SERVICE 0.00006
#define COST_AGE 0.02
static const double cost_duty[N_DUTY] = { 0.0, 0.10, 0.25 };

#define P_MISSING_LOAD 0.01               /* load_pct written as NA */

/* unplanned_stops ~ Poisson(operating_hours exp(eta) u), u ~ gamma(STOPS_FRAILTY shape,
   mean 1), eta = STOPS_B0 + STOPS_AGE mean_age + stops_site[site]. */
#define STOPS_B0 -7.6
#define STOPS_AGE 0.06
#define STOPS_FRAILTY 20.0
static const double stops_site[N_SITES] = { 0.0, 0.20, -0.15, 0.30, -0.25, 0.10 };

/* Site fleets for stops.csv: starting pump count and mean age (years). */
static const int fleet_start[N_SITES] = { 24, 16, 12, 20, 8, 10 };
static const double age_start[N_SITES] = { 6.0, 9.5, 4.0, 12.0, 7.5, 3.0 };
#define P_RENEW 0.03                      /* chance per month that a site renews pumps */
#define RENEW_FACTOR 0.75                 /* mean age after a renewal, as a share of before */

static double
round_to (double x, double scale)         /* to the precision it is printed with */
{
  return floor (x * scale + 0.5) / scale;
}

static size_t
pick (const gsl_rng *r, const double *share, size_t k)
{
  const double u = gsl_rng_uniform (r);
  double acc = 0.0;
  size_t i;
  for (i = 0; i + 1 < k; i++) {
    acc += share[i];
    if (u < acc)
      return i;
  }
  return k - 1;
}

/* Inverse gaussian variate with mean MU and shape LAMBDA (Var = MU^3 / LAMBDA), by the
   transformation with multiple roots (Michael, Schucany & Haas 1976, The American Statistician
   30, 88-90).  Uses one normal and one uniform draw. */
static double
ran_invgauss (const gsl_rng *r, double mu, double lambda)
{
  const double z = gsl_ran_ugaussian (r);
  const double v = z * z;
  const double x = mu + mu * mu * v / (2.0 * lambda)
                   - mu / (2.0 * lambda) * sqrt (4.0 * mu * lambda * v + mu * mu * v * v);
  const double u = gsl_rng_uniform (r);
  return u <= mu / (mu + x) ? x : mu * mu / x;
}

static int
days_in_month (int year, int month)
{
  static const int days[12] = { 31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31 };
  const int leap = (year % 4 == 0 && year % 100 != 0) || year % 400 == 0;
  return days[month - 1] + (month == 2 && leap);
}

static int
write_pumps (FILE *f, unsigned long seed)
{
  gsl_rng *r = gsl_rng_alloc (gsl_rng_mt19937);
  size_t j;
  if (r == NULL)
    return -1;
  gsl_rng_set (r, seed);
  fprintf (f, "job_id,site,duty,age_years,load_pct,hours_since_service,repair_hours,"
           "parts_cost\n");
  for (j = 0; j < N_JOBS; j++) {
    /* Draws in a fixed order, one set per job. */
    const size_t s = pick (r, site_share, N_SITES);
    const size_t d = pick (r, duty_share, N_DUTY);
    const double age = round_to (0.5 + 24.5 * gsl_rng_uniform (r), 100.0);
    const double load = round_to (load_lo[d] + (load_hi[d] - load_lo[d]) * gsl_rng_uniform (r),
                                  10.0);
    const double since = round_to (50.0 + 7950.0 * gsl_rng_uniform (r), 1.0);
    const int missing = gsl_rng_uniform (r) < P_MISSING_LOAD;
    const double mu = exp (REPAIR_B0 + REPAIR_AGE * age + REPAIR_LOAD * load + repair_site[s]);
    const double hours = gsl_ran_gamma (r, REPAIR_SHAPE, mu / REPAIR_SHAPE);
    const double m = exp (COST_B0 + cost_duty[d] + COST_SERVICE * since + COST_AGE * age);
    const double cost = ran_invgauss (r, m, 1.0 / COST_PHI);
    /* Keep the printed values positive (never needed at the default seed). */
    const double hours_out = hours < 0.01 ? 0.01 : hours;
    const double cost_out = cost < 0.01 ? 0.01 : cost;
    char load_cell[32];
    if (missing)
      strcpy (load_cell, "NA");
    else
      snprintf (load_cell, sizeof load_cell, "%.1f", load);
    fprintf (f, "J%05zu,%s,%s,%.2f,%s,%.0f,%.2f,%.2f\n", j + 1, site_name[s], duty_name[d], age,
             load_cell, since, hours_out, cost_out);
  }
  gsl_rng_free (r);
  return ferror (f) ? -1 : 0;
}

static int
write_stops (FILE *f, unsigned long seed)
{
  gsl_rng *r = gsl_rng_alloc (gsl_rng_mt19937);
  size_t s;
  if (r == NULL)
    return -1;
  gsl_rng_set (r, seed);
  fprintf (f, "site,month,pumps_running,operating_hours,mean_age,unplanned_stops\n");
  for (s = 0; s < N_SITES; s++) {
    int pumps = fleet_start[s];
    double age = age_start[s];
    int k;
    for (k = 0; k < N_MONTHS; k++) {
      const int year = FIRST_YEAR + k / 12, month = 1 + k % 12;
      /* The fleet changes by one pump now and then; it never drops below 3. */
      const double u = gsl_rng_uniform (r);
      const double renew = gsl_rng_uniform (r);
      const double util = 0.55 + 0.35 * gsl_rng_uniform (r);
      double hours, mean_age, mu, frailty;
      unsigned int stops;
      if (u < 0.04 && pumps > 3)
        pumps--;
      else if (u > 0.96)
        pumps++;
      age += 1.0 / 12.0;
      if (renew < P_RENEW)
        age *= RENEW_FACTOR;
      hours = round_to (pumps * 24.0 * days_in_month (year, month) * util, 10.0);
      mean_age = round_to (age, 100.0);
      mu = hours * exp (STOPS_B0 + STOPS_AGE * mean_age + stops_site[s]);
      frailty = gsl_ran_gamma (r, STOPS_FRAILTY, 1.0 / STOPS_FRAILTY);
      stops = gsl_ran_poisson (r, mu * frailty);
      fprintf (f, "%s,%04d-%02d,%d,%.1f,%.2f,%u\n", site_name[s], year, month, pumps, hours,
               mean_age, stops);
    }
  }
  gsl_rng_free (r);
  return ferror (f) ? -1 : 0;
}

static int
write_file (const char *path, int which, unsigned long seed)
{
  FILE *f = fopen (path, "w");
  int status;
  if (f == NULL) {
    fprintf (stderr, "gen_demo: cannot open '%s': %s\n", path, strerror (errno));
    return -1;
  }
  status = which == 0 ? write_pumps (f, seed) : write_stops (f, seed + 1);
  if (fclose (f) != 0 || status != 0) {
    fprintf (stderr, "gen_demo: write failed: '%s'\n", path);
    return -1;
  }
  return 0;
}

static void
usage (FILE *f)
{
  fprintf (f, "usage: gen_demo [--seed N] pumps|stops\n"
           "       gen_demo [--seed N] PUMPS.csv STOPS.csv\n"
           "writes ballast's invented pump-fleet demo data (default seed %lu)\n", DEFAULT_SEED);
}

int
main (int argc, char **argv)
{
  unsigned long seed = DEFAULT_SEED;
  int i = 1;
  if (argc > 1 && (strcmp (argv[1], "--help") == 0 || strcmp (argv[1], "-h") == 0)) {
    usage (stdout);
    return 0;
  }
  if (i < argc && strcmp (argv[i], "--seed") == 0) {
    char *end;
    if (i + 1 >= argc) {
      fprintf (stderr, "gen_demo: --seed: missing value\n");
      return 2;
    }
    errno = 0;
    seed = strtoul (argv[i + 1], &end, 10);
    if (errno != 0 || end == argv[i + 1] || *end != '\0' || argv[i + 1][0] == '-'
        || seed > 4294967294UL) {
      fprintf (stderr, "gen_demo: --seed: not a seed: '%s'\n", argv[i + 1]);
      return 2;
    }
    i += 2;
  }
  if (argc - i == 1 && (strcmp (argv[i], "pumps") == 0 || strcmp (argv[i], "stops") == 0)) {
    const int status = strcmp (argv[i], "pumps") == 0 ? write_pumps (stdout, seed)
                                                      : write_stops (stdout, seed + 1);
    if (fclose (stdout) != 0 || status != 0) {
      fprintf (stderr, "gen_demo: write failed: stdout\n");
      return 1;
    }
    return 0;
  }
  if (argc - i == 2)
    return write_file (argv[i], 0, seed) == 0 && write_file (argv[i + 1], 1, seed) == 0 ? 0 : 1;
  usage (stderr);
  return 2;
}
