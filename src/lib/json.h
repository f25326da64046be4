/* json.h -- a small streaming JSON writer (internal, not installed).

   Numbers are written with 17 significant digits (%.17g), which reads back to the same
   double; non-finite numbers are written as null (the caller records why).  Strings are
   escaped per RFC 8259.  Output is indented by two spaces per level.  Write errors are
   sticky: check bl_json_error once at the end. */
#ifndef BALLAST_JSON_H
#define BALLAST_JSON_H
#include <stdio.h>

#define BL_JSON_MAX_DEPTH 32

typedef struct bl_json {
  FILE *f;
  int depth;
  int count[BL_JSON_MAX_DEPTH];   /* members written at each level */
  int err;
} bl_json;

void bl_json_init (bl_json *w, FILE *f);
/* KEY is NULL for a value inside an array or at the top. */
void bl_json_obj (bl_json *w, const char *key);
void bl_json_obj_end (bl_json *w);
void bl_json_arr (bl_json *w, const char *key);
void bl_json_arr_end (bl_json *w);
void bl_json_str (bl_json *w, const char *key, const char *val);   /* NULL val writes null */
void bl_json_num (bl_json *w, const char *key, double val);
void bl_json_size (bl_json *w, const char *key, size_t val);
void bl_json_bool (bl_json *w, const char *key, int val);
void bl_json_null (bl_json *w, const char *key);
/* Finish the document (a newline) and return nonzero when any write failed. */
int bl_json_finish (bl_json *w);

#endif
