// Gaussian blur of a pattern by FFT (FFTW), with mirror-symmetric boundaries.
#pragma once

#include <memory>

namespace orderband {

/// Convolution with a sampled Gaussian of standard deviation sigma_px,
/// truncated at 4σ and normalised to unit sum, separable in x and y: the
/// kernel and boundary of scipy.ndimage.gaussian_filter(mode="reflect",
/// truncate=4.0). The image is mirrored to 2h × 2w, whose periodic
/// extension is exactly the half-sample-symmetric ("reflect") extension, so
/// one circular FFT convolution gives the same result for any σ.
/// Plans are made once; apply() is safe to call from several threads.
class GaussianBlur {
 public:
  GaussianBlur(int width, int height, double sigma_px);
  ~GaussianBlur();
  GaussianBlur(const GaussianBlur&) = delete;
  GaussianBlur& operator=(const GaussianBlur&) = delete;

  /// out may equal in.
  void apply(const float* in, float* out) const;
  double sigma_px() const { return sigma_; }

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
  double sigma_;
};

}  // namespace orderband
