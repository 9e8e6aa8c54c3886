/* sillwatch: acceleration of gravity at a site. */
#ifndef SILLWATCH_GRAVITY_H
#define SILLWATCH_GRAVITY_H

#include "sillwatch/error.h"

/* Standard acceleration of gravity, m/s^2 (3rd CGPM, 1901). */
#define SW_GRAVITY_STANDARD 9.80665

/* Free-air gradient used to carry normal gravity up to the site, s^-2. */
#define SW_GRAVITY_FREE_AIR_GRADIENT 3.086e-6

/* Normal gravity, m/s^2, at geodetic latitude `lat_deg` (degrees, -90..90)
 * and elevation `elev_m` (metres above the ellipsoid, -1000..10000), from
 * the closed formula of the Geodetic Reference System 1980 (Somigliana's
 * formula with the GRS80 constants) less the free-air gradient times the
 * elevation.  Returns SW_OK, or SW_ESITE when an argument is out of range
 * or not finite.  `err` may be NULL. */
int sw_gravity_normal(double lat_deg, double elev_m, double *g_ms2,
                      sw_error *err);

#endif
