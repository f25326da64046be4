/* io_path.c -- which paths name the same file (see io_path.h).

   Two paths name one file when the file exists and both lead to its device and inode
   number (POSIX stat, st_dev and st_ino: the identity of a file; common practice, no
   source), or, for a file not yet made, when they resolve to the same name: the real path
   of the longest folder that exists, then the remaining components.  The check sorts the
   identities and looks at neighbours, so a spec run of many jobs costs n log n. */
#define _GNU_SOURCE 1            /* memrchr */
#include <errno.h>
#include <limits.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>
#include "alloc.h"
#include "io_path.h"

#ifndef PATH_MAX
#define PATH_MAX 4096
#endif

/* The kinds of identity, in sort order. */
enum { ID_NONE, ID_INODE, ID_NAME, ID_STDOUT };

typedef struct entry {
  char *label, *path;
  unsigned flags;
  int kind;
  unsigned long long dev, ino;
  char *name;                    /* ID_NAME: the resolved name */
  size_t index;                  /* order of addition */
} entry;

struct bl_path_set {
  entry *e;
  size_t n, cap;
};

bl_path_set *
bl_path_set_new (bl_err *err)
{
  bl_path_set *s = bl_calloc (1, sizeof *s);
  if (!s)
    bl_fail (err, BL_ENOMEM, "paths", "out of memory");
  return s;
}

void
bl_path_set_free (bl_path_set *s)
{
  if (!s)
    return;
  for (size_t i = 0; i < s->n; i++) {
    bl_free (s->e[i].label);
    bl_free (s->e[i].path);
    bl_free (s->e[i].name);
  }
  bl_free (s->e);
  bl_free (s);
}

/* Append component C (LEN bytes) of a path to OUT (length *N, capacity CAP), dropping "."
   and empty components.  0, or -1 when it does not fit. */
static int
put_component (char *out, size_t *n, size_t cap, const char *c, size_t len)
{
  if (len == 0 || (len == 1 && c[0] == '.'))
    return 0;
  if (*n + 1 + len + 1 > cap)
    return -1;
  if (*n == 0 || out[*n - 1] != '/')
    out[(*n)++] = '/';
  memcpy (out + *n, c, len);
  *n += len;
  out[*n] = '\0';
  return 0;
}

/* The resolved name of PATH, a path that does not exist (or cannot be examined): the real
   path of its longest existing folder, then the rest of PATH component by component.  When
   no folder of it resolves (a folder that cannot be searched), the path itself, made
   absolute from the working folder, stands for it.  A new string, or NULL (no memory). */
static char *
resolve_name (const char *path)
{
  const size_t len = strlen (path);
  char real[PATH_MAX], out[2 * PATH_MAX + 2];
  size_t cut = len, n = 0;
  const char *rest = path;
  int found = 0;
  while (cut > 1 && path[cut - 1] == '/')
    cut--;
  for (;;) {
    const char *slash = memrchr (path, '/', cut);
    char prefix[PATH_MAX];
    if (!slash) {
      snprintf (prefix, sizeof prefix, ".");
      rest = path;
    } else if (slash == path) {
      snprintf (prefix, sizeof prefix, "/");
      rest = slash + 1;
    } else {
      const size_t pl = (size_t) (slash - path);
      if (pl >= sizeof prefix)
        break;
      memcpy (prefix, path, pl);
      prefix[pl] = '\0';
      rest = slash + 1;
    }
    if (realpath (prefix, real)) {
      found = 1;
      break;
    }
    if ((errno != ENOENT && errno != ENOTDIR) || !slash || slash == path)
      break;
    cut = (size_t) (slash - path);
  }
  if (!found) {                     /* the path itself, from the working folder */
    rest = path;
    if (path[0] == '/' || !getcwd (real, sizeof real))
      real[0] = '\0';
  }
  n = strlen (real);
  if (n >= sizeof out)
    n = 0;
  memcpy (out, real, n);
  out[n] = '\0';
  for (const char *c = rest; *c;) {
    const char *e = strchr (c, '/');
    const size_t cl = e ? (size_t) (e - c) : strlen (c);
    if (put_component (out, &n, sizeof out, c, cl) != 0)
      break;
    c += cl;
    while (*c == '/')
      c++;
  }
  if (n == 0)
    snprintf (out, sizeof out, "/");
  return bl_strdup (out);
}

/* Fill E's identity from its path and flags.  BL_OK or BL_ENOMEM. */
static int
identify (entry *e)
{
  struct stat sb;
  const int output = (e->flags & BL_PATH_OUTPUT) != 0;
  int r;
  if (strcmp (e->path, "-") == 0) {
    r = fstat (output ? STDOUT_FILENO : STDIN_FILENO, &sb);
    if (r == 0 && S_ISREG (sb.st_mode)) {
      e->kind = ID_INODE;
      e->dev = (unsigned long long) sb.st_dev;
      e->ino = (unsigned long long) sb.st_ino;
    } else {
      e->kind = output ? ID_STDOUT : ID_NONE;
    }
    return BL_OK;
  }
  r = (e->flags & BL_PATH_NOFOLLOW) ? lstat (e->path, &sb) : stat (e->path, &sb);
  if (r == 0) {
    if (S_ISREG (sb.st_mode) || S_ISDIR (sb.st_mode)) {
      e->kind = ID_INODE;
      e->dev = (unsigned long long) sb.st_dev;
      e->ino = (unsigned long long) sb.st_ino;
    } else {
      e->kind = ID_NONE;          /* a device, a FIFO, a link kept as it is: never replaced */
    }
    return BL_OK;
  }
  e->kind = ID_NAME;
  e->name = resolve_name (e->path);
  return e->name ? BL_OK : BL_ENOMEM;
}

int
bl_path_set_add (bl_path_set *s, const char *path, unsigned flags, const char *label,
                 bl_err *err)
{
  entry *e;
  if (!path || !path[0])
    return bl_fail (err, BL_ESPEC, label, "the file name is empty");
  if (s->n == s->cap) {
    const size_t cap = s->cap ? 2 * s->cap : 8;
    entry *ne = bl_realloc (s->e, cap * sizeof *ne);
    if (!ne)
      return bl_fail (err, BL_ENOMEM, "paths", "out of memory");
    s->e = ne;
    s->cap = cap;
  }
  e = &s->e[s->n];
  memset (e, 0, sizeof *e);
  e->flags = flags;
  e->index = s->n;
  e->label = bl_strdup (label ? label : "");
  e->path = bl_strdup (path);
  if (!e->label || !e->path || identify (e) != BL_OK) {
    bl_free (e->label);
    bl_free (e->path);
    bl_free (e->name);
    return bl_fail (err, BL_ENOMEM, "paths", "out of memory");
  }
  s->n++;
  return BL_OK;
}

/* Order by identity, then by order of addition. */
static int
cmp_entry (const void *a, const void *b)
{
  const entry *x = *(const entry *const *) a, *y = *(const entry *const *) b;
  int c = 0;
  if (x->kind != y->kind)
    return x->kind < y->kind ? -1 : 1;
  if (x->kind == ID_INODE) {
    if (x->dev != y->dev)
      return x->dev < y->dev ? -1 : 1;
    if (x->ino != y->ino)
      return x->ino < y->ino ? -1 : 1;
  } else if (x->kind == ID_NAME) {
    c = strcmp (x->name, y->name);
  }
  if (c)
    return c;
  return x->index < y->index ? -1 : x->index > y->index;
}

static int
same_id (const entry *x, const entry *y)
{
  if (x->kind != y->kind || x->kind == ID_NONE)
    return 0;
  if (x->kind == ID_INODE)
    return x->dev == y->dev && x->ino == y->ino;
  if (x->kind == ID_NAME)
    return strcmp (x->name, y->name) == 0;
  return 1;                         /* two outputs on standard output */
}

/* How entry E is named in a message: "standard output", "'PATH'". */
static void
subject (const entry *e, char *buf, size_t cap)
{
  if (strcmp (e->path, "-") == 0)
    snprintf (buf, cap, "standard %s", (e->flags & BL_PATH_OUTPUT) ? "output" : "input");
  else
    snprintf (buf, cap, "'%s'", e->path);
}

int
bl_path_set_check (const bl_path_set *s, bl_err *err)
{
  const entry **v;
  const entry *out = NULL, *partner = NULL;
  size_t m = 0;
  if (s->n < 2)
    return BL_OK;
  if (!(v = bl_mallocn (s->n, sizeof *v)))
    return bl_fail (err, BL_ENOMEM, "paths", "out of memory");
  for (size_t i = 0; i < s->n; i++)
    if (s->e[i].kind != ID_NONE)
      v[m++] = &s->e[i];
  qsort (v, m, sizeof *v, cmp_entry);
  for (size_t i = 0; i < m;) {
    size_t j = i + 1;
    const entry *o = NULL, *in = NULL, *o2 = NULL;
    while (j < m && same_id (v[i], v[j]))
      j++;
    for (size_t k = i; k < j; k++) {      /* in order of addition within the group */
      if (!(v[k]->flags & BL_PATH_OUTPUT)) {
        if (!in)
          in = v[k];
      } else if (!o) {
        o = v[k];
      } else if (!o2) {
        o2 = v[k];
      }
    }
    if (o && (in || o2) && (!out || o->index < out->index)) {
      out = o;
      partner = in ? in : o2;
    }
    i = j;
  }
  bl_free (v);
  if (out) {
    char a[PATH_MAX + 32], b[PATH_MAX + 32];
    const int two = (partner->flags & BL_PATH_OUTPUT) != 0;
    subject (out, a, sizeof a);
    subject (partner, b, sizeof b);
    return bl_fail (err, BL_ESPEC, out->label, "%s is the same file as %s%s%s; %s", a,
                    partner->label, strcmp (a, b) == 0 ? "" : " ",
                    strcmp (a, b) == 0 ? "" : b,
                    two ? "two outputs cannot share one file"
                        : "an output must not replace an input");
  }
  return BL_OK;
}
