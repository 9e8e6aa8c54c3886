/* sillwatch: the netCDF C library's entry points, loaded at first use.
 *
 * libnetcdf pulls in HDF5, curl and their own dependencies: loaded with
 * the program they took 9 MiB of every process's memory, a plain replay
 * of CSV files included.  So the program does not link it: the first
 * NetCDF series (or member listing) loads it with dlopen(3) and takes
 * the functions it uses into a table; the NetCDF reader (ncseries.c)
 * calls them through that table under their own names (macros).  Each
 * entry's type is checked against <netcdf.h> at compile time.  Private
 * to the library.
 */
#ifndef SILLWATCH_NETCDFLOAD_H
#define SILLWATCH_NETCDFLOAD_H

#include <stddef.h>

#include <netcdf.h>

#include "sillwatch/error.h"

/* X(name, return type, parameters) for each function used. */
#define SW_NETCDF_FUNCTIONS(X)                                              \
    X(nc_open, int, (const char *, int, int *))                             \
    X(nc_close, int, (int))                                                 \
    X(nc_strerror, const char *, (int))                                     \
    X(nc_free_string, int, (size_t, char **))                               \
    X(nc_get_att_double, int, (int, int, const char *, double *))           \
    X(nc_get_att_string, int, (int, int, const char *, char **))            \
    X(nc_get_att_text, int, (int, int, const char *, char *))               \
    X(nc_get_var1_double, int, (int, int, const size_t *, double *))        \
    X(nc_get_var1_longlong, int, (int, int, const size_t *, long long *))   \
    X(nc_get_var1_string, int, (int, int, const size_t *, char **))         \
    X(nc_get_vara_double, int,                                              \
      (int, int, const size_t *, const size_t *, double *))                 \
    X(nc_get_vara_text, int,                                                \
      (int, int, const size_t *, const size_t *, char *))                   \
    X(nc_inq_att, int, (int, int, const char *, nc_type *, size_t *))       \
    X(nc_inq_dimlen, int, (int, int, size_t *))                             \
    X(nc_inq_dimname, int, (int, int, char *))                              \
    X(nc_inq_nvars, int, (int, int *))                                      \
    X(nc_inq_vardimid, int, (int, int, int *))                              \
    X(nc_inq_varid, int, (int, const char *, int *))                        \
    X(nc_inq_varndims, int, (int, int, int *))                              \
    X(nc_inq_vartype, int, (int, int, nc_type *))

#define SW_NETCDF_MEMBER(name, ret, params) ret(*name) params;
typedef struct sw_netcdf_api {
    SW_NETCDF_FUNCTIONS(SW_NETCDF_MEMBER)
} sw_netcdf_api;
#undef SW_NETCDF_MEMBER

/* The loaded table (after a successful sw_netcdf_load()). */
extern const sw_netcdf_api *sw_netcdf;

/* Load the library once (thread-safe).  Returns SW_OK, or SW_EDATA naming
 * `path` (the file that needed it) and the loader's reason. */
int sw_netcdf_load(const char *path, sw_error *err);

#endif
