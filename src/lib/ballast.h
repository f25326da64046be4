/* ballast.h -- umbrella header of libballast: variance-aware regression for counts and
   positive skewed amounts.  Include this, or the module headers one by one. */
#ifndef BALLAST_BALLAST_H
#define BALLAST_BALLAST_H
#include "version.h"
#include "error.h"
#include "table.h"
#include "io_path.h"
#include "terms.h"
#include "design.h"
#include "family.h"
#include "link.h"
#include "fit.h"
#include "report.h"
#include "diag.h"
#include "compare.h"
#include "job.h"
#include "model.h"
#ifdef __cplusplus
extern "C" {
#endif


#ifdef __cplusplus
}
#endif
#endif
