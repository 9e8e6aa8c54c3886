/* sillwatch: level series read from CF-NetCDF files (netCDF C library).
 *
 * The file follows the CF conventions' discrete-sampling-geometry time
 * series (CF 1.8, chapter 9, featureType = timeSeries): a time coordinate
 * (standard_name "time", axis "T", or the variable "time") whose `units`
 * are "seconds|minutes|hours|days since DATE[ TIME][ZONE]" and whose
 * `calendar` is absent, "standard" or "gregorian" (others are an error);
 * level variables over that time dimension and optionally a station
 * dimension (that of the variable with cf_role = "timeseries_id") and a
 * member dimension (the one named member_dimension; default "realization",
 * else "member").  A level variable's `units` must be m or ft (metre,
 * metres, meter, meters, foot, feet); `scale_factor`/`add_offset` are
 * applied; `_FillValue`, `missing_value` (or the type's default fill) and
 * NaN are missing readings.
 *
 * A reader over such a file (sw_reader_open() with format netcdf, see
 * series.h) hands out the same records a CSV reader would: one per time
 * index, times in milliseconds, values in m; the same checks (a time
 * earlier than the one before, the same time twice with different values:
 * errors; an exact duplicate: skipped and counted; |value| > 100000:
 * rejected and counted).  Its "line" in messages and statistics is the
 * time index + 1, its "column" the value column's number.  Memory does not
 * grow with the file: one record is read at a time.
 *
 * Value columns are named "VARIABLE" or, for one member of an ensemble
 * variable, "VARIABLE#LABEL" (sw_nc_members()).
 */
#ifndef SILLWATCH_NCSERIES_H
#define SILLWATCH_NCSERIES_H

#include <stddef.h>

#include "sillwatch/error.h"
#include "sillwatch/series.h"

typedef struct sw_nc sw_nc; /* opaque */

/* Open the NetCDF file `cfg->path` for the value columns `columns`
 * (names as above), at station `station` ("" or NULL: the file must hold
 * one) with members along `member_dim` ("" or NULL: realization or
 * member).  Counts go to *stats, which the caller owns and zeroes.
 * Errors: SW_EDATA naming the file (and variable, attribute, station),
 * SW_ENOMEM. */
int sw_nc_open(sw_nc **nc, const sw_reader_config *cfg,
               const sw_column_config *columns, size_t n_columns,
               sw_reader_stats *stats, sw_error *err);

/* The next record, as sw_reader_next(). */
int sw_nc_next(sw_nc *nc, int *has_row, sw_time_ms *t, double *values,
               sw_error *err);

void sw_nc_free(sw_nc *nc);

/* The members of `variable` in the NetCDF file at `path`: *n labels (the
 * values of the member coordinate variable, or the index from 0 where
 * there is none) and their column names "VARIABLE#LABEL", each array of
 * *n strings released with sw_csv_header_free().  *n = 0 when the variable
 * has no member dimension.  Errors as sw_nc_open(). */
int sw_nc_members(const char *path, const char *variable,
                  const char *member_dim, char ***labels, char ***columns,
                  size_t *n, sw_error *err);

#endif
