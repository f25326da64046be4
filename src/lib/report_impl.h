/* report_impl.h -- what the JSON writers share (internal, not installed): the head of every
   JSON document and its "data" object, written by report_json.c. */
#ifndef BALLAST_REPORT_IMPL_H
#define BALLAST_REPORT_IMPL_H
#include <stdio.h>
#include "json.h"

/* The "data" object shared by every document (report_json.c). */
struct bl_design;
void bl_report_data_json (bl_json *w, const struct bl_design *d, const char *source);
/* The head of every document: bl_json_init on OUT, the top object opened, "tool" with VERSION,
   then "data" when D is not NULL (report_json.c). */
void bl_report_head_json (bl_json *w, FILE *out, const char *version,
                          const struct bl_design *d, const char *source);

#endif
