/* sillwatch: density of water (see include/sillwatch/water.h). */
#include "sillwatch/water.h"

#include <math.h>

/* Check one argument of the equation of state against its valid range.
 * `what` names the quantity and `unit` its unit (with a leading space, or
 * "" for a dimensionless one), so that the message reads as a sentence. */
static int check_range(double value, double lo, double hi, const char *what,
                       const char *unit, sw_error *err)
{
    if (!isfinite(value))
        return sw_error_set(err, SW_ESITE, NULL, 0, 0,
                            "%s is not a finite number (%g); the UNESCO 1981 "
                            "equation of state of seawater is valid for %g "
                            "to %g%s",
                            what, value, lo, hi, unit);
    if (value < lo || value > hi)
        return sw_error_set(err, SW_ESITE, NULL, 0, 0,
                            "%s %g%s is outside the range %g to %g%s in "
                            "which the UNESCO 1981 equation of state of "
                            "seawater is valid",
                            what, value, unit, lo, hi, unit);
    return SW_OK;
}

int sw_water_density(double t_C, double s, double *rho_kgm3, sw_error *err)
{
    /* Coefficients of the UNESCO 1981 one-atmosphere international equation
     * of state of seawater, Fofonoff and Millard (1983), UNESCO Technical
     * Papers in Marine Science 44: eq. (14) is the density of Standard Mean
     * Ocean Water (pure water, SMOW) as a fifth-degree polynomial in t, and
     * eq. (13) adds the salinity terms
     *   rho(S,t,0) = rho_w(t) + A(t) S + B(t) S^1.5 + C S^2.
     * t is on IPTS-68 in degrees C, S is practical salinity. */
    static const double rho_w[6] = {
        999.842594, 6.793952e-2, -9.095290e-3,
        1.001685e-4, -1.120083e-6, 6.536332e-9
    };
    static const double a[5] = {
        8.24493e-1, -4.0899e-3, 7.6438e-5, -8.2467e-7, 5.3875e-9
    };
    static const double b[3] = { -5.72466e-3, 1.0227e-4, -1.6546e-6 };
    static const double c0 = 4.8314e-4;
    double pure, coef_a, coef_b;
    int status;

    status = check_range(t_C, SW_WATER_T_MIN_C, SW_WATER_T_MAX_C,
                         "water temperature", " degrees C", err);
    if (status != SW_OK)
        return status;
    status = check_range(s, SW_WATER_S_MIN, SW_WATER_S_MAX,
                         "practical salinity", "", err);
    if (status != SW_OK)
        return status;

    /* Horner's scheme, highest power first. */
    pure = ((((rho_w[5] * t_C + rho_w[4]) * t_C + rho_w[3]) * t_C
             + rho_w[2]) * t_C + rho_w[1]) * t_C + rho_w[0];
    coef_a = (((a[4] * t_C + a[3]) * t_C + a[2]) * t_C + a[1]) * t_C + a[0];
    coef_b = (b[2] * t_C + b[1]) * t_C + b[0];

    *rho_kgm3 = pure + coef_a * s + coef_b * s * sqrt(s) + c0 * s * s;
    return SW_OK;
}
