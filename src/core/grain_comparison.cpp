// One grain's mean pattern placed between another grain's two classes of points, compared over the
// crystal directions both grains show.
#include "grain_comparison.hpp"

#include <array>
#include <cmath>

namespace orderband {

CommonViewComparison::CommonViewComparison(const FractionScan& scan, const Preprocessor& data,
                                           const Preprocessor& model, const BandProfiler& features,
                                           const std::vector<std::vector<float>>& grain_mean,
                                           const std::vector<std::vector<double>>& signature)
    : scan_(scan), data_(data), model_(model), features_(features), grain_mean_(grain_mean), signature_(signature) {}

std::vector<double> CommonViewComparison::profiled(const std::vector<float>& pattern, int g,
                                                   const std::vector<double>& weight) const {
  std::vector<FamilyProfile> prof;
  features_.profile_weighted(pattern.data(), weight, scan_.rays, scan_.grain_orientation[g], prof);
  const size_t bins = static_cast<size_t>(features_.bins());
  std::vector<double> out(prof.size() * bins, std::nan(""));
  profile_bin_means(prof, bins, out.data());
  return out;
}

std::vector<double> CommonViewComparison::disordered_model(int g, const std::vector<double>& weight) const {
  std::vector<float> img(scan_.pixels());
  scan_.model->phase(model_, scan_.geometry, scan_.grain_orientation[g], false, img.data());
  return profiled(img, g, weight);
}

double CommonViewComparison::position(int h, int g, const std::array<std::vector<float>, 2>& g_classes) const {
  const CommonView view = common_view_weights(scan_.rays, scan_.pre.mask(), scan_.grain_orientation[h],
                                              scan_.grain_orientation[g], scan_.symmetry, kCoverageNside);
  const std::vector<double> xh = profiled(grain_mean_[h], h, view.a);
  std::array<std::vector<double>, 2> x = {profiled(g_classes[0], g, view.b), profiled(g_classes[1], g, view.b)};
  // What the processing on the screen makes of the same crystal directions at two places, from
  // the model's disordered pattern, in the data's band contrast (the slope of g's class 0 on the
  // model over the fundamental families).
  const std::vector<double> mh = disordered_model(h, view.a), mg = disordered_model(g, view.b);
  const size_t bins = static_cast<size_t>(features_.bins());
  const double slope = data_to_model_slope(x[0], mg, scan_.families.first_fundamental * bins);
  for (size_t i = 0; i < xh.size(); ++i)
    for (std::vector<double>& v : x) v[i] += slope * (mh[i] - mg[i]);
  return position_between_classes(xh, x[0], x[1], signature_[h], bins);
}

std::vector<std::vector<double>> CommonViewComparison::positions(const std::vector<uint8_t>& one_phase,
                                                                 const std::vector<uint8_t>& two_phase,
                                                                 const std::vector<uint8_t>& cls) const {
  const int G = scan_.grains;
  std::vector<std::vector<double>> c(G + 1, std::vector<double>(G + 1, std::nan("")));
  const std::vector<int32_t>& id = scan_.ori.grains.id;
  std::array<GrainPatternSums, 2> sums;
  for (uint8_t k = 0; k < 2; ++k)
    sums[k] = scan_.sum_grain_patterns(data_, [&](size_t q) { return id[q] > 0 && two_phase[id[q]] && cls[q] == k; });
  for (int g = 1; g <= G; ++g) {
    if (!two_phase[g] || sums[0].count[g] < kMinClassPatterns || sums[1].count[g] < kMinClassPatterns) continue;
    const std::array<std::vector<float>, 2> classes = {sums[0].mean(g), sums[1].mean(g)};
    for (int h = 1; h <= G; ++h)
      if (one_phase[h] && !grain_mean_[h].empty()) c[h][g] = position(h, g, classes);
  }
  return c;
}

}  // namespace orderband
