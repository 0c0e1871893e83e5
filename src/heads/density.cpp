#include "levelhead/heads/density.hpp"

#include <fmt/format.h>

#include <cmath>

#include "levelhead/core/errors.hpp"

namespace levelhead {

// EOS-80 at one atmosphere (UNESCO 1981): the density of standard mean
// ocean water (Bigg 1967) plus the salinity terms of Millero and Poisson (1981).
double water_density_eos80(double s, double t) {
  if (!(s >= 0.0 && s <= 42.0) || !(t >= -2.0 && t <= 40.0)) {
    throw OptionError(
        fmt::format("salinity {} and temperature {} degrees C lie outside the range "
                    "of the EOS-80 equation of state (0-42, -2..40 degrees C)",
                    s, t));
  }
  const double rho_w =
      999.842594 +
      t * (6.793952e-2 +
           t * (-9.095290e-3 + t * (1.001685e-4 + t * (-1.120083e-6 + t * 6.536332e-9))));
  const double a =
      8.24493e-1 + t * (-4.0899e-3 + t * (7.6438e-5 + t * (-8.2467e-7 + t * 5.3875e-9)));
  const double b = -5.72466e-3 + t * (1.0227e-4 - t * 1.6546e-6);
  const double c = 4.8314e-4;
  return rho_w + a * s + b * s * std::sqrt(s) + c * s * s;
}

double freshwater_head(double h, double rho, double z, double rho_f) {
  return (rho / rho_f) * h - ((rho - rho_f) / rho_f) * z;
}

double environmental_head(double h_f, double rho_a, double z_i, double z_r, double rho_f) {
  return h_f - ((rho_a - rho_f) / rho_f) * (z_r - z_i);
}

}  // namespace levelhead
