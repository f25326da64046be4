/* version.c -- library version and build facts. */
#include "config.h"
#include "version.h"

const char *bl_version (void) { return PACKAGE_VERSION; }
const char *bl_blas_name (void) { return BL_BLAS_NAME; }
