// Two grains' patterns compared over the crystal directions both show: weights that give both the
// same density of directions, and one grain's position between another's two classes.
#pragma once

#include <cmath>
#include <cstdint>
#include <vector>

#include "orderband/rotation.hpp"
#include "orderband/sphere.hpp"

namespace orderband {

/// Per detector pixel of two grains (orientations a and b), the weights that give both the same
/// density of crystal directions: each pixel's direction is taken to its representative under the
/// Laue group (with the inversion) and binned on HEALPix cells of `nside`; in every cell each
/// grain's pixels are weighted down to the smaller of the two grains' solid angles there (0 where
/// the other grain sees nothing). A family's profile averages its bands along the stretches on the
/// screen, and how much of each stretch (and of the zone axes on it) enters differs from grain to
/// grain; with these weights both profiles average the same directions alike.
struct CommonView {
  std::vector<double> a, b;  ///< per detector pixel, 0 outside the mask
  double shared = 0;         ///< the share of a's solid angle that b sees as densely
};
CommonView common_view_weights(const DetectorRays& rays, const std::vector<uint8_t>& mask, const Rotation& a,
                               const Rotation& b, const CrystalSymmetry& symmetry, int nside);

/// Grain h's position between two classes of another grain's points on profile features
/// (families × bins, NaN where not covered): over the bins where `signature` is not 0, each
/// family's mean over them taken out of every profile (so that an offset does not enter),
/// c = Σ (h − S₀)(S₁ − S₀) / Σ (S₁ − S₀)². NaN where no bin is used.
double position_between_classes(const std::vector<double>& h, const std::vector<double>& class0,
                                const std::vector<double>& class1, const std::vector<double>& signature, size_t bins);

/// Sums for the least-squares slope of y on x (a straight line with its own intercept): the scale
/// of the data's band contrast against the model's wherever the two are compared.
struct SlopeSums {
  double sx = 0, sy = 0, sxx = 0, sxy = 0, n = 0;
  void add(double x, double y) { sx += x, sy += y, sxx += x * x, sxy += x * y, n += 1; }
  /// The slope; NaN below 4 pairs or where x does not spread.
  double slope() const {
    const double var = sxx - sx * sx / (n > 0 ? n : 1.0);
    return n >= 4 && var > 0 ? (sxy - sx * sy / n) / var : std::nan("");
  }
};

/// The least-squares slope of `data` on `model` over the entries from `from` on where both are
/// known (1 where fewer than 4 or no spread).
double data_to_model_slope(const std::vector<double>& data, const std::vector<double>& model, size_t from);

}  // namespace orderband
