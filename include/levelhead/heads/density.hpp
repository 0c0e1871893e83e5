#pragma once
// Variable-density heads.
//
// Freshwater head of a point-water head (Lusczynski 1961, "Head and flow of
// ground water of variable density", J. Geophys. Res. 66(12), 4247-4256):
//   h_f = (rho / rho_f) h - ((rho - rho_f) / rho_f) z
// with h the point-water head (m), z the elevation of the measuring point in
// the aquifer (the screen's middle, m, same reference), rho the density of
// the water in the well and rho_f that of fresh water (kg/m^3). It follows
// from the pressure at the screen, p = rho g (h - z) = rho_f g (h_f - z).
//
// Density of water from temperature and salinity at atmospheric pressure:
// the one-atmosphere equation of state of seawater, EOS-80 (UNESCO 1981,
// Tenth report of the joint panel on oceanographic tables and standards,
// UNESCO technical papers in marine science 36; Millero and Poisson 1981),
// valid for 0-42 (practical salinity) and -2..40 degrees C.

namespace levelhead {

// kg/m^3; salinity on the practical salinity scale, temperature in degrees C.
// Throws OptionError outside the range of validity.
double water_density_eos80(double salinity, double temperature_c);

// m; see the header comment.
double freshwater_head(double point_water_head, double density, double screen_elevation,
                       double fresh_density = 1000.0);

// Environmental-water head (Lusczynski 1961; Post, Kooi and Simmons 2007,
// "Using hydraulic head measurements in variable-density ground water flow
// analyses", Ground Water 45(6), 664-671): the freshwater head corrected for
// the mean density rho_a of the water between the screen (z_i) and a chosen
// reference elevation z_r,
//   h_n = h_f - ((rho_a - rho_f) / rho_f) (z_r - z_i)   (m).
// Differences of h_n between points on one vertical give the vertical flow.
// It follows from p_i = rho_f g (h_f - z_i) = rho_f g (h_n - z_r) + rho_a g (z_r - z_i).
double environmental_head(double freshwater_head, double mean_density, double screen_elevation,
                          double reference_elevation, double fresh_density = 1000.0);

}  // namespace levelhead
