/* error.c -- bl_fail, bl_strerror and the warning list. */
#include <stdarg.h>
#include <stdio.h>
#include <string.h>
#include "alloc.h"
#include "error.h"

int
bl_fail (bl_err *err, int code, const char *where, const char *fmt, ...)
{
  if (err) {
    va_list ap;
    err->code = code;
    snprintf (err->where, sizeof err->where, "%s", where ? where : "");
    va_start (ap, fmt);
    vsnprintf (err->msg, sizeof err->msg, fmt, ap);
    va_end (ap);
  }
  return code;
}

void
bl_err_clear (bl_err *err)
{
  if (err) {
    err->code = BL_OK;
    err->where[0] = '\0';
    err->msg[0] = '\0';
  }
}

const char *
bl_strerror (int code)
{
  switch (code) {
  case BL_OK: return "success";
  case BL_CONTINUE: return "iteration not finished";
  case BL_ENOMEM: return "out of memory";
  case BL_EIO: return "input/output error";
  case BL_EDATA: return "data error";
  case BL_ESPEC: return "usage or syntax error";
  case BL_ENOCONV: return "no convergence";
  case BL_ECANCEL: return "cancelled";
  case BL_EINTERNAL: return "internal error";
  default: return "unknown status";
  }
}

int
bl_warnings_add (bl_warnings *w, const char *fmt, ...)
{
  char buf[1024];
  va_list ap;
  char *copy;
  va_start (ap, fmt);
  vsnprintf (buf, sizeof buf, fmt, ap);
  va_end (ap);
  if (w->n == w->cap) {
    const size_t cap = w->cap ? 2 * w->cap : 4;
    char **m = bl_realloc (w->msg, cap * sizeof *m);
    if (!m)
      return BL_ENOMEM;
    w->msg = m;
    w->cap = cap;
  }
  copy = bl_strdup (buf);
  if (!copy)
    return BL_ENOMEM;
  w->msg[w->n++] = copy;
  return BL_OK;
}

void
bl_warnings_clear (bl_warnings *w)
{
  if (!w)
    return;
  for (size_t i = 0; i < w->n; i++)
    bl_free (w->msg[i]);
  bl_free (w->msg);
  w->msg = NULL;
  w->n = w->cap = 0;
}

size_t
bl_join_names (char *buf, size_t len, const char *sep, const char *const *names, size_t n)
{
  size_t need = 0;
  if (len > 0)
    buf[0] = '\0';
  for (size_t i = 0; i < n; i++) {
    const char *parts[2] = { i ? sep : "", names[i] };
    for (int k = 0; k < 2; k++) {
      const size_t l = strlen (parts[k]);
      if (need + l < len) {
        memcpy (buf + need, parts[k], l);
        buf[need + l] = '\0';
      } else if (len > 0 && need < len) {
        memcpy (buf + need, parts[k], len - 1 - need);
        buf[len - 1] = '\0';
      }
      need += l;
    }
  }
  return need;
}
