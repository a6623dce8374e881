// Internal: one grain's mean pattern placed between another grain's two classes of points,
// compared over the crystal directions both grains show.
#pragma once

#include <array>
#include <cstdint>
#include <vector>

#include "fraction_context.hpp"
#include "orderband/common_view.hpp"

namespace orderband {

/// Where grains of one component lie between the classes of the grains of two components, measured
/// on their mean patterns (LearnedInputs::position_between). Grain h's mean pattern and grain g's
/// class means are profiled over the crystal directions both see, at equal density
/// (common_view_weights); the model's disordered pattern, profiled the same way at both
/// orientations and scaled to the data's band contrast, moves g's classes to h's place (what the
/// processing on the screen, the static background and the dynamic one, makes of the same
/// directions at two places); h then lies at c between them over the bins of its ordering
/// signature (position_between_classes). The model's change with ordering does not enter, and its
/// band shapes only through that small move: on many-beam patterns, whose bands the kinematic model
/// does not draw, the primary particle's grain lies at 0.95–1.36 of the way from a grain's matrix to
/// its particles where the model's whole change between the two orientations put it at 0.33–1.12
/// (and at −0.24 to 0.85 on the scan of the γ′-free layer, which named it disordered).
class CommonViewComparison {
 public:
  /// `grain_mean[h]` (index = grain id) is grain h's mean pattern processed by `data` (empty where
  /// too few points gave one), `signature[h]` its ordering signature
  /// (LearnedInputs::ordering_signature), `features` the profiler of the learned features, `model`
  /// the processing of the model's patterns. All must outlive this object.
  CommonViewComparison(const FractionScan& scan, const Preprocessor& data, const Preprocessor& model,
                       const BandProfiler& features, const std::vector<std::vector<float>>& grain_mean,
                       const std::vector<std::vector<double>>& signature);

  /// Per grain h of `one_phase` and grain g of `two_phase` (indices = grain ids): h's position
  /// between g's classes (`cls` per point: 0, 1, or anything else for points not to be used), NaN
  /// where h has no mean pattern or a class of g fewer than kMinClassPatterns patterns.
  std::vector<std::vector<double>> positions(const std::vector<uint8_t>& one_phase,
                                             const std::vector<uint8_t>& two_phase,
                                             const std::vector<uint8_t>& cls) const;

  static constexpr int kMinClassPatterns = 8;
  static constexpr int kCoverageNside = 16;  ///< coverage cells of about 3.7°

 private:
  double position(int h, int g, const std::array<std::vector<float>, 2>& g_classes) const;
  /// A pattern's features at grain g's orientation, each pixel weighted by `weight`.
  std::vector<double> profiled(const std::vector<float>& pattern, int g, const std::vector<double>& weight) const;
  /// The model's disordered pattern at grain g's orientation, profiled with `weight`.
  std::vector<double> disordered_model(int g, const std::vector<double>& weight) const;

  const FractionScan& scan_;
  const Preprocessor& data_;
  const Preprocessor& model_;
  const BandProfiler& features_;
  const std::vector<std::vector<float>>& grain_mean_;
  const std::vector<std::vector<double>>& signature_;
};

}  // namespace orderband
