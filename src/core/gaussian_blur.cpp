// FFT Gaussian blur on the mirrored image.
#include "orderband/gaussian_blur.hpp"

#include <fftw3.h>

#include <cmath>
#include <complex>
#include <mutex>
#include <vector>

#include "orderband/error.hpp"

namespace orderband {
namespace {
std::mutex& planner_mutex() {  // the FFTW planner is not thread-safe
  static std::mutex m;
  return m;
}
}  // namespace

struct GaussianBlur::Impl {
  int w = 0, h = 0, W = 0, H = 0;  // image and mirrored sizes
  fftw_plan forward = nullptr, backward = nullptr;
  std::vector<double> kernel_hat;  // real spectrum of the symmetric kernel, H × (W/2 + 1)
};

GaussianBlur::GaussianBlur(int width, int height, double sigma_px) : impl_(std::make_unique<Impl>()), sigma_(sigma_px) {
  if (width <= 0 || height <= 0) fail("blur: image size must be positive");
  if (!(sigma_px > 0) || !std::isfinite(sigma_px))
    fail("blur: sigma must be a positive number of pixels, got ", sigma_px);
  Impl& m = *impl_;
  m.w = width;
  m.h = height;
  m.W = 2 * width;
  m.H = 2 * height;
  const int cw = m.W / 2 + 1;
  // 1-D kernel as scipy builds it: radius = int(4σ + 0.5), weights exp(−x²/2σ²) normalised.
  const int radius = static_cast<int>(4.0 * sigma_px + 0.5);
  std::vector<double> k1(2 * radius + 1);
  double sum = 0;
  for (int x = -radius; x <= radius; ++x) sum += k1[x + radius] = std::exp(-0.5 * x * x / (sigma_px * sigma_px));
  for (double& v : k1) v /= sum;
  // Wrap the kernel onto the periodic grid (taps beyond one period fold back, as the
  // infinite mirrored extension requires).
  std::vector<double> kx(m.W, 0.0), ky(m.H, 0.0);
  for (int x = -radius; x <= radius; ++x) {
    kx[((x % m.W) + m.W) % m.W] += k1[x + radius];
    ky[((x % m.H) + m.H) % m.H] += k1[x + radius];
  }
  std::vector<double> kernel(static_cast<size_t>(m.W) * m.H);
  for (int i = 0; i < m.H; ++i)
    for (int j = 0; j < m.W; ++j) kernel[static_cast<size_t>(i) * m.W + j] = ky[i] * kx[j];
  std::vector<std::complex<double>> spec(static_cast<size_t>(m.H) * cw);
  {
    std::lock_guard<std::mutex> lock(planner_mutex());
    fftw_plan p =
        fftw_plan_dft_r2c_2d(m.H, m.W, kernel.data(), reinterpret_cast<fftw_complex*>(spec.data()), FFTW_ESTIMATE);
    fftw_execute(p);
    fftw_destroy_plan(p);
    std::vector<double> real(static_cast<size_t>(m.W) * m.H);
    m.forward = fftw_plan_dft_r2c_2d(m.H, m.W, real.data(), reinterpret_cast<fftw_complex*>(spec.data()),
                                     FFTW_ESTIMATE | FFTW_UNALIGNED);
    m.backward = fftw_plan_dft_c2r_2d(m.H, m.W, reinterpret_cast<fftw_complex*>(spec.data()), real.data(),
                                      FFTW_ESTIMATE | FFTW_UNALIGNED);
  }
  m.kernel_hat.resize(spec.size());
  const double norm = 1.0 / (static_cast<double>(m.W) * m.H);  // FFTW's transforms are unnormalised
  for (size_t k = 0; k < spec.size(); ++k) m.kernel_hat[k] = spec[k].real() * norm;
}

GaussianBlur::~GaussianBlur() {
  std::lock_guard<std::mutex> lock(planner_mutex());
  fftw_destroy_plan(impl_->forward);
  fftw_destroy_plan(impl_->backward);
}

void GaussianBlur::apply(const float* in, float* out) const {
  const Impl& m = *impl_;
  const int cw = m.W / 2 + 1;
  thread_local std::vector<double> real;
  thread_local std::vector<std::complex<double>> spec;
  real.resize(static_cast<size_t>(m.W) * m.H);
  spec.resize(static_cast<size_t>(m.H) * cw);
  // Mirror: (i, j) → (2h−1−i, 2w−1−j).
  for (int i = 0; i < m.H; ++i) {
    const int si = i < m.h ? i : m.H - 1 - i;
    for (int j = 0; j < m.W; ++j) {
      const int sj = j < m.w ? j : m.W - 1 - j;
      real[static_cast<size_t>(i) * m.W + j] = in[static_cast<size_t>(si) * m.w + sj];
    }
  }
  fftw_execute_dft_r2c(m.forward, real.data(), reinterpret_cast<fftw_complex*>(spec.data()));
  for (size_t k = 0; k < spec.size(); ++k) spec[k] *= m.kernel_hat[k];
  fftw_execute_dft_c2r(m.backward, reinterpret_cast<fftw_complex*>(spec.data()), real.data());
  for (int i = 0; i < m.h; ++i)
    for (int j = 0; j < m.w; ++j)
      out[static_cast<size_t>(i) * m.w + j] = static_cast<float>(real[static_cast<size_t>(i) * m.W + j]);
}

}  // namespace orderband
