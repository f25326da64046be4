/* testutil.h -- helpers shared by the Check suites. */
#ifndef BALLAST_TESTUTIL_H
#define BALLAST_TESTUTIL_H
#include <stddef.h>

/* Log relative error of X against the certified C: -log10(|x - c| / |c|), or -log10|x| when
   c == 0 (the NIST StRD convention, McCullagh 2000 / NIST StRD notes).  Capped at 15 for an
   exact match. */
double lre (double x, double c);

/* Path of FILE under the source tree's tests/data (static buffer per call site is not used:
   the result is written into BUF of CAP bytes and returned). */
const char *test_data_path (const char *file, char *buf, size_t cap);

/* Make an empty temporary directory; returns its path in BUF.  Aborts the test on failure. */
const char *test_tmpdir (char *buf, size_t cap);

/* Nonzero when running under valgrind (long double is computed as double there, so accuracy
   assertions that need extended precision are skipped). */
int test_under_valgrind (void);

#endif
