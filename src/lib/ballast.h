/* ballast.h -- umbrella header of libballast: variance-aware regression for counts and
   positive skewed amounts.  Include this, or the module headers one by one. */
#ifndef BALLAST_BALLAST_H
#define BALLAST_BALLAST_H
#include "alloc.h"
#include "error.h"
#include "source.h"
#include "table.h"
#include "terms.h"
#include "design.h"
#include "family.h"
#include "link.h"
#include "lsq.h"
#include "irls.h"
#include "fit.h"
#include "report.h"
#include "diag.h"
#include "compare.h"
#include "job.h"
#include "spec.h"
#include "batch.h"
#include "model.h"
#include "nested.h"
#include "tweedie.h"
#ifdef __cplusplus
extern "C" {
#endif

#define BL_VERSION_MAJOR 0
#define BL_VERSION_MINOR 1
#define BL_VERSION_PATCH 0
#define BL_VERSION_STRING "0.1.0"

/* The library's version string ("0.1.0"), which may differ from the header's. */
const char *bl_version (void);
/* The CBLAS the library was linked with ("openblas" or "gsl"). */
const char *bl_blas_name (void);

#ifdef __cplusplus
}
#endif
#endif
