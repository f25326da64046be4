/* report_impl.h -- what the writers share (internal, not installed): the head of every JSON
   document and its "data" object (report_json.c), and the HTML report's sections and page
   (report_html.c), which the batch runner writes. */
#ifndef BALLAST_REPORT_IMPL_H
#define BALLAST_REPORT_IMPL_H
#include <stdio.h>
#include <signal.h>
#include "json.h"
#include "job.h"

/* The "data" object shared by every document (report_json.c). */
struct bl_design;
void bl_report_data_json (bl_json *w, const struct bl_design *d, const char *source);
/* The head of every document: bl_json_init on OUT, the top object opened, "tool" with VERSION,
   then "data" when D is not NULL (report_json.c). */
void bl_report_head_json (bl_json *w, FILE *out, const char *version,
                          const struct bl_design *d, const char *source);
/* The nested test A (--against) as the "against" object with its null_reasons; ST holds the
   bigger model's figures (report_json.c; used by fit's and diagnose's documents). */
void bl_report_against_json (bl_json *w, const bl_nested *a, const bl_fit_stats *st);

/* The HTML report (report_html.c).  A job's section: its ranked table (or the single model),
   the recommendation and caution, and SVG plots drawn from PLOTS (job_run.h: the series the
   job runner computed for C or FIT; may be NULL only when nothing is drawn).  C or FIT is
   given (the other NULL); for a failed job both are NULL and ROW->message says why.  SEED is
   the plots' seed, as the section states it.  CANCEL (may be NULL) is polled between plots:
   once set, BL_ECANCEL with the section incomplete.  BL_EINTERNAL for contradictory
   arguments, BL_EIO when a write failed, BL_ENOMEM. */
int bl_report_section_html (FILE *out, const bl_batch_row *row, const bl_compare *c,
                            const bl_fit *fit, const bl_design *d, unsigned long seed,
                            const bl_job_plots *plots, volatile sig_atomic_t *cancel,
                            bl_err *err);
/* The same for a caller without the runner's series (batch.c): computes them with
   bl_job_plots_init (C or FIT, SEED, CANCEL), writes the section and frees them. */
int bl_report_job_html (FILE *out, const bl_batch_row *row, const bl_compare *c,
                        const bl_fit *fit, const bl_design *d, unsigned long seed,
                        volatile sig_atomic_t *cancel, bl_err *err);
/* The whole page around the sections (already written to strings, in job order). */
int bl_report_html_page (FILE *out, const char *title, const bl_batch_row *rows,
                         const char *const *sections, size_t njobs, bl_err *err);

#endif
