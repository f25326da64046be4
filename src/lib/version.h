/* version.h -- the library's version: the header's macros and the built library's answers. */
#ifndef BALLAST_VERSION_H
#define BALLAST_VERSION_H

/* BL_API marks the library's public functions and objects.  The library is compiled with
   -fvisibility=hidden and BL_BUILDING_LIB, so that libballast.so exports these and nothing
   else; every installed header includes this one (through error.h). */
#if defined BL_BUILDING_LIB && defined __GNUC__
# define BL_API __attribute__ ((visibility ("default")))
#else
# define BL_API
#endif
#ifdef __cplusplus
extern "C" {
#endif

#define BL_VERSION_MAJOR 0
#define BL_VERSION_MINOR 1
#define BL_VERSION_PATCH 0
#define BL_VERSION_STRING "0.1.0"

/* The library's version string ("0.1.0"), which may differ from the header's. */
BL_API const char *bl_version (void);
/* The CBLAS the library was linked with ("openblas" or "gsl"). */
BL_API const char *bl_blas_name (void);

#ifdef __cplusplus
}
#endif
#endif
