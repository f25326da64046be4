/* jsonw.h -- a small streaming JSON writer (internal, not installed).

   Numbers are written with 17 significant digits (%.17g), which reads back to the same
   double; non-finite numbers are written as null (the caller records why).  Strings are
   escaped per RFC 8259.  Output is indented by two spaces per level.  Write errors are
   sticky: check jw_error once at the end. */
#ifndef BALLAST_JSONW_H
#define BALLAST_JSONW_H
#include <stdio.h>

#define JW_MAX_DEPTH 32

typedef struct bl_jsonw {
  FILE *f;
  int depth;
  int count[JW_MAX_DEPTH];   /* members written at each level */
  int err;
} bl_jsonw;

void jw_init (bl_jsonw *w, FILE *f);
/* KEY is NULL for a value inside an array or at the top. */
void jw_obj (bl_jsonw *w, const char *key);
void jw_obj_end (bl_jsonw *w);
void jw_arr (bl_jsonw *w, const char *key);
void jw_arr_end (bl_jsonw *w);
void jw_str (bl_jsonw *w, const char *key, const char *val);   /* NULL val writes null */
void jw_num (bl_jsonw *w, const char *key, double val);
void jw_size (bl_jsonw *w, const char *key, size_t val);
void jw_bool (bl_jsonw *w, const char *key, int val);
void jw_null (bl_jsonw *w, const char *key);
/* Finish the document (a newline) and return nonzero when any write failed. */
int jw_finish (bl_jsonw *w);

/* The "data" object shared by every document (report_json.c). */
struct bl_design;
void bl_report_data_json (bl_jsonw *w, const struct bl_design *d, const char *source);
/* The head of every document: jw_init on OUT, the top object opened, "tool" with VERSION,
   then "data" when D is not NULL (report_json.c). */
void bl_report_head_json (bl_jsonw *w, FILE *out, const char *version,
                          const struct bl_design *d, const char *source);

#endif
