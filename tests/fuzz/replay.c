/* replay.c -- run a libFuzzer harness over saved inputs without libFuzzer.

   Linked with one fuzz_*.c file (by gcc or clang, with or without sanitizers), it feeds every
   regular file of each directory named on the command line (and each file named directly) to
   LLVMFuzzerTestOneInput, in sorted order, after LLVMFuzzerInitialize when the harness has
   one.  `make check` uses it to replay the seed corpora and the saved regressions under
   AddressSanitizer and UBSan.  Each input has REPLAY_TIMEOUT seconds (default 60, 0 for no
   limit), as libFuzzer's -timeout: an input that runs longer is reported with its name and
   ends the run with status 1 (gcc's -fsanitize=undefined leaves out float-cast-overflow, so
   an endless loop behind such a cast shows up only as a timeout).  Exit status: 0 when every
   input ran (a harness that finds a bug aborts, which fails the run), 1 when a file could not
   be read or an input timed out, 2 for a usage error. */
#include <dirent.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <signal.h>
#include <sys/stat.h>
#include <unistd.h>

int LLVMFuzzerTestOneInput (const uint8_t *data, size_t size);
int LLVMFuzzerInitialize (int *argc, char ***argv) __attribute__ ((weak));

static const char *volatile current;     /* the input running, for the timeout message */

static void
on_alarm (int sig)
{
  static const char head[] = "replay: timeout: ";
  const char *c = current ? current : "?";
  (void) sig;
  (void) !write (2, head, sizeof head - 1);
  (void) !write (2, c, strlen (c));
  (void) !write (2, "\n", 1);
  _exit (1);
}

static unsigned timeout_s = 60;

static int
run_file (const char *path, size_t *count)
{
  FILE *f = fopen (path, "rb");
  unsigned char *buf = NULL, *grown;
  size_t len = 0, cap = 0, k;
  if (!f) {
    fprintf (stderr, "replay: %s: cannot open\n", path);
    return 1;
  }
  do {
    if (cap - len < 4096) {
      cap = cap ? 2 * cap : 8192;
      if (!(grown = realloc (buf, cap))) {
        fprintf (stderr, "replay: %s: out of memory\n", path);
        free (buf);
        fclose (f);
        return 1;
      }
      buf = grown;
    }
    k = fread (buf + len, 1, cap - len, f);
    len += k;
  } while (k > 0);
  if (ferror (f)) {
    fprintf (stderr, "replay: %s: read failed\n", path);
    free (buf);
    fclose (f);
    return 1;
  }
  fclose (f);
  /* An exact-size copy, so that AddressSanitizer sees a read past the input's end. */
  grown = malloc (len ? len : 1);
  if (!grown) {
    free (buf);
    return 1;
  }
  memcpy (grown, buf, len);
  free (buf);
  current = path;
  alarm (timeout_s);
  LLVMFuzzerTestOneInput (grown, len);
  alarm (0);
  free (grown);
  (*count)++;
  return 0;
}

static int
by_name (const void *a, const void *b)
{
  return strcmp (*(char *const *) a, *(char *const *) b);
}

static int
run_dir (const char *dir, size_t *count)
{
  DIR *d = opendir (dir);
  struct dirent *e;
  char **names = NULL, **grown;
  size_t n = 0, cap = 0, i;
  int status = 0;
  if (!d) {
    fprintf (stderr, "replay: %s: cannot open the folder\n", dir);
    return 1;
  }
  while ((e = readdir (d))) {
    char *path;
    struct stat st;
    if (e->d_name[0] == '.')
      continue;
    path = malloc (strlen (dir) + strlen (e->d_name) + 2);
    if (!path)
      break;
    sprintf (path, "%s/%s", dir, e->d_name);
    if (stat (path, &st) != 0 || !S_ISREG (st.st_mode)) {
      free (path);
      continue;
    }
    if (n == cap) {
      cap = cap ? 2 * cap : 64;
      if (!(grown = realloc (names, cap * sizeof *names))) {
        free (path);
        break;
      }
      names = grown;
    }
    names[n++] = path;
  }
  closedir (d);
  qsort (names, n, sizeof *names, by_name);
  for (i = 0; i < n; i++) {
    status |= run_file (names[i], count);
    free (names[i]);
  }
  free (names);
  return status;
}

int
main (int argc, char **argv)
{
  size_t count = 0;
  int status = 0;
  if (argc < 2) {
    fprintf (stderr, "usage: %s DIR_OR_FILE...\n", argv[0]);
    return 2;
  }
  if (getenv ("REPLAY_TIMEOUT"))
    timeout_s = (unsigned) strtoul (getenv ("REPLAY_TIMEOUT"), NULL, 10);
  signal (SIGALRM, on_alarm);
  if (LLVMFuzzerInitialize)
    LLVMFuzzerInitialize (&argc, &argv);
  for (int i = 1; i < argc; i++) {
    struct stat st;
    if (stat (argv[i], &st) != 0) {
      fprintf (stderr, "replay: %s: no such file or folder\n", argv[i]);
      status = 1;
    } else if (S_ISDIR (st.st_mode))
      status |= run_dir (argv[i], &count);
    else
      status |= run_file (argv[i], &count);
  }
  fprintf (stderr, "replay: %zu inputs run\n", count);
  return status;
}
