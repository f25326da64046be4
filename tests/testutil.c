/* testutil.c -- helpers shared by the Check suites. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "testutil.h"

#ifndef BL_TEST_SRCDIR
#define BL_TEST_SRCDIR "."
#endif

double
lre (double x, double c)
{
  double r;
  if (!isfinite (x))
    return 0.0;
  r = (c == 0.0) ? fabs (x) : fabs (x - c) / fabs (c);
  if (r == 0.0)
    return 15.0;
  r = -log10 (r);
  return r > 15.0 ? 15.0 : r;
}

const char *
test_data_path (const char *file, char *buf, size_t cap)
{
  const char *top = getenv ("top_srcdir");
  snprintf (buf, cap, "%s/tests/data/%s", top ? top : BL_TEST_SRCDIR, file);
  return buf;
}

const char *
test_tmpdir (char *buf, size_t cap)
{
  const char *base = getenv ("TMPDIR");
  snprintf (buf, cap, "%s/ballast-test-XXXXXX", base ? base : "/tmp");
  if (!mkdtemp (buf)) {
    perror ("mkdtemp");
    abort ();
  }
  return buf;
}

int
test_under_valgrind (void)
{
  const char *p = getenv ("LD_PRELOAD");
  if (getenv ("BALLAST_UNDER_VALGRIND"))
    return 1;
  return p && (strstr (p, "vgpreload") != NULL);
}
