/* bench_util.h -- what the benchmark programs share: wall and CPU clocks, timed child
   commands, peak memory, the machine's load while a step ran, buffered CSV output, and the
   results file and table of the report modes (see bench/README.md). */
#ifndef BALLAST_BENCH_UTIL_H
#define BALLAST_BENCH_UTIL_H
#include <stddef.h>
#include <stdio.h>
#include <zlib.h>

/* Wall time in seconds, CLOCK_MONOTONIC. */
double now (void);
/* Print "bench: WHAT: MSG" on stderr and exit 1. */
void die (const char *what, const char *msg);
/* The whole number in environment variable NAME (at least 1000), or DFLT when unset. */
size_t env_size (const char *name, size_t dflt);
/* The size of PATH in bytes (dies when it cannot be read). */
double file_bytes (const char *path);
/* Read PATH once in-process: puts it in the page cache. */
void warm (const char *path);
/* Wall time of ARGV run with stdout to /dev/null; -1 when it could not run or failed. */
double time_cmd (char *const argv[]);
/* The best of REPS runs of time_cmd; -1 when one failed. */
double best_cmd (char *const argv[], int reps);
/* Peak and current resident set of this process in bytes (/proc/self/status). */
double peak_rss (void);
double cur_rss (void);
/* CPU seconds the whole machine spent busy (/proc/stat); -1 if unknown. */
double machine_busy (void);
/* CPU seconds of this process and its waited-for children. */
double own_cpu (void);

/* Other work on the machine while a step ran: load_begin at its start, load_end at its end
   prints TAG.others_cpu, TAG.own_cpu and TAG.disturbed (1 when others used more than the
   cores the step leaves free, it wanting WANT of them, plus 5% of the machine). */
typedef struct load {
  double wall, busy, own;
} load;
void load_begin (load *l);
void load_end (const load *l, const char *tag, unsigned want);

/* qsort comparison of doubles, ascending. */
int cmp_double (const void *a, const void *b);

/* Output buffer flushed to a plain file and, when gz is set, to a gzip copy. */
typedef struct out {
  FILE *f;
  gzFile gz;
  char *buf;
  size_t len, cap;
  const char *path;
} out;
void out_flush (out *o);
/* Append X with 4 decimals ("%.4f" rounded half away from zero). */
void put_fixed4 (out *o, double x);

/* The KEY VALUE lines of a results file; the last value of a key wins. */
typedef struct kv {
  char key[64];
  char val[64];
} kv;
typedef struct results {
  kv *e;
  size_t n;
} results;
/* Read PATH (dies when it cannot); free R.e after use. */
results results_read (const char *path);
const char *get_s (const results *r, const char *key);
double get (const results *r, const char *key);   /* NAN when absent */

/* The table's verdicts so far. */
typedef struct tally {
  int miss, fail;
} tally;
/* One row: FIGURE, MEASURED, REFERENCE, RATIO, TARGET; LO <= ratio <= HI passes, counted in
   T. */
void row (tally *t, const char *figure, double meas, const char *unit, double ref,
          const char *refname, double ratio, const char *target, double lo, double hi);
#endif
