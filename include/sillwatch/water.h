/* sillwatch: density of water.
 *
 * Densities come from the UNESCO 1981 one-atmosphere international equation
 * of state of seawater, as published by Fofonoff and Millard (1983), UNESCO
 * Technical Papers in Marine Science 44, eq. (13) with the pure-water
 * polynomial of eq. (14).  Temperature is on the scale that paper uses
 * (IPTS-68, degrees Celsius); salinity is practical salinity (PSS-78,
 * dimensionless, "psu").
 */
#ifndef SILLWATCH_WATER_H
#define SILLWATCH_WATER_H

#include "sillwatch/error.h"

/* Range in which the equation of state is valid, as the paper states it:
 * practical salinity 0..42 and temperature -2..40 degrees C. */
#define SW_WATER_T_MIN_C (-2.0)
#define SW_WATER_T_MAX_C 40.0
#define SW_WATER_S_MIN 0.0
#define SW_WATER_S_MAX 42.0

/* Plausible range for a density given directly, in kg/m^3: from warm fresh
 * water to dense brine and sediment-laden water.  Outside it, a value is
 * almost certainly a unit mistake (g/cm^3 typed for kg/m^3, say). */
#define SW_WATER_RHO_MIN_KGM3 950.0
#define SW_WATER_RHO_MAX_KGM3 1100.0

/* Density at one standard atmosphere, in kg/m^3, of water at temperature
 * `t_C` (degrees C) and practical salinity `s`.
 * Returns SW_OK and stores the density in *rho_kgm3, or SW_ESITE (message
 * naming the valid range) when t_C or s lies outside the equation's range
 * or is not finite.  `err` may be NULL. */
int sw_water_density(double t_C, double s, double *rho_kgm3, sw_error *err);

#endif
