/* version.h -- the library's version: the header's macros and the built library's answers. */
#ifndef BALLAST_VERSION_H
#define BALLAST_VERSION_H
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
