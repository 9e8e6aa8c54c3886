/* sillwatch: acceleration of gravity at a site (see
 * include/sillwatch/gravity.h). */
#include "sillwatch/gravity.h"

#include <math.h>

/* Valid ranges of the arguments, as the header states them. */
static const double lat_min_deg = -90.0;
static const double lat_max_deg = 90.0;
static const double elev_min_m = -1000.0;
static const double elev_max_m = 10000.0;

static const double pi = 3.14159265358979323846;

/* Check one argument against its valid range; `what` names it and `unit`
 * is its unit, so that the message reads as a sentence. */
static int check_range(double value, double lo, double hi, const char *what,
                       const char *unit, sw_error *err)
{
    if (!isfinite(value))
        return sw_error_set(err, SW_ESITE, NULL, 0, 0,
                            "%s is not a finite number (%g); normal gravity "
                            "is computed for %g to %g %s",
                            what, value, lo, hi, unit);
    if (value < lo || value > hi)
        return sw_error_set(err, SW_ESITE, NULL, 0, 0,
                            "%s %g %s is outside the range %g to %g %s for "
                            "normal gravity",
                            what, value, unit, lo, hi, unit);
    return SW_OK;
}

int sw_gravity_normal(double lat_deg, double elev_m, double *g_ms2,
                      sw_error *err)
{
    /* Constants of the Geodetic Reference System 1980 (Moritz, "Geodetic
     * Reference System 1980", Bulletin Geodesique 54, 1980): normal gravity
     * at the equator, Somigliana's constant k = (b gamma_p)/(a gamma_e) - 1,
     * and the first eccentricity squared of the ellipsoid. */
    static const double gamma_e_ms2 = 9.7803267715;
    static const double k = 0.001931851353;
    static const double e2 = 0.00669438002290;
    double sin_lat, sin2, gamma_ms2;
    int status;

    status = check_range(lat_deg, lat_min_deg, lat_max_deg, "latitude",
                         "degrees", err);
    if (status != SW_OK)
        return status;
    status = check_range(elev_m, elev_min_m, elev_max_m, "elevation", "m",
                         err);
    if (status != SW_OK)
        return status;

    /* Somigliana's closed formula for normal gravity on the ellipsoid,
     *   gamma = gamma_e (1 + k sin^2 phi) / sqrt(1 - e^2 sin^2 phi),
     * exact for the level ellipsoid (Moritz 1980, GRS80 definition), then
     * the linear free-air reduction to the site's elevation. */
    sin_lat = sin(lat_deg * (pi / 180.0));
    sin2 = sin_lat * sin_lat;
    gamma_ms2 = gamma_e_ms2 * (1.0 + k * sin2) / sqrt(1.0 - e2 * sin2);

    *g_ms2 = gamma_ms2 - SW_GRAVITY_FREE_AIR_GRADIENT * elev_m;
    return SW_OK;
}
