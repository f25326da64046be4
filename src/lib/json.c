/* json.c -- the streaming JSON writer (see json.h). */
#include <math.h>
#include <stdio.h>
#include "json.h"

void
bl_json_init (bl_json *w, FILE *f)
{
  w->f = f;
  w->depth = 0;
  w->count[0] = 0;
  w->err = 0;
}

static void
put (bl_json *w, const char *s)
{
  if (fputs (s, w->f) == EOF)
    w->err = 1;
}

static void
indent (bl_json *w)
{
  for (int i = 0; i < w->depth; i++)
    put (w, "  ");
}

static void
put_string (bl_json *w, const char *s)
{
  put (w, "\"");
  for (const unsigned char *c = (const unsigned char *) s; *c; c++) {
    char buf[8];
    switch (*c) {
    case '"': put (w, "\\\""); break;
    case '\\': put (w, "\\\\"); break;
    case '\n': put (w, "\\n"); break;
    case '\r': put (w, "\\r"); break;
    case '\t': put (w, "\\t"); break;
    default:
      if (*c < 0x20) {
        snprintf (buf, sizeof buf, "\\u%04x", *c);
        put (w, buf);
      } else if (fputc (*c, w->f) == EOF) {
        w->err = 1;
      }
    }
  }
  put (w, "\"");
}

/* Separator, newline, indentation and "key": before a member. */
static void
member (bl_json *w, const char *key)
{
  if (w->depth > 0) {
    put (w, w->count[w->depth] ? ",\n" : "\n");
    indent (w);
  }
  w->count[w->depth]++;
  if (key) {
    put_string (w, key);
    put (w, ": ");
  }
}

static void
open_level (bl_json *w, const char *key, const char *bracket)
{
  member (w, key);
  put (w, bracket);
  if (w->depth + 1 < BL_JSON_MAX_DEPTH) {
    w->depth++;
    w->count[w->depth] = 0;
  } else {
    w->err = 1;
  }
}

static void
close_level (bl_json *w, const char *bracket)
{
  const int had = w->count[w->depth];
  if (w->depth > 0)
    w->depth--;
  if (had) {
    put (w, "\n");
    indent (w);
  }
  put (w, bracket);
}

void bl_json_obj (bl_json *w, const char *key) { open_level (w, key, "{"); }
void bl_json_obj_end (bl_json *w) { close_level (w, "}"); }
void bl_json_arr (bl_json *w, const char *key) { open_level (w, key, "["); }
void bl_json_arr_end (bl_json *w) { close_level (w, "]"); }

void
bl_json_str (bl_json *w, const char *key, const char *val)
{
  member (w, key);
  if (val)
    put_string (w, val);
  else
    put (w, "null");
}

void
bl_json_num (bl_json *w, const char *key, double val)
{
  char buf[40];
  member (w, key);
  if (!isfinite (val)) {
    put (w, "null");
    return;
  }
  if (val == 0.0)
    val = 0.0;                    /* no "-0" */
  snprintf (buf, sizeof buf, "%.17g", val);
  put (w, buf);
}

void
bl_json_size (bl_json *w, const char *key, size_t val)
{
  char buf[32];
  member (w, key);
  snprintf (buf, sizeof buf, "%zu", val);
  put (w, buf);
}

void
bl_json_bool (bl_json *w, const char *key, int val)
{
  member (w, key);
  put (w, val ? "true" : "false");
}

void
bl_json_null (bl_json *w, const char *key)
{
  member (w, key);
  put (w, "null");
}

int
bl_json_finish (bl_json *w)
{
  put (w, "\n");
  return w->err;
}
