// Bloch-wave solution of the dynamical equations and the backscattered intensity.
#include "orderband/bloch_waves.hpp"

#include <gemmi/elem.hpp>

#include <algorithm>
#include <cmath>

#include <Eigen/Eigenvalues>
#include <Eigen/LU>

#include "orderband/error.hpp"
#include "orderband/units.hpp"

namespace orderband {

namespace {

constexpr std::complex<double> kI{0.0, 1.0};

/// The largest Miller index a reflection with |g| ≤ max_g can have: h = g · a, so |h| ≤ |g| |a|.
int largest_index(const Phase& phase, double max_g) {
  const Eigen::Matrix3d& orth = phase.cell.orth;
  const double longest = std::max({orth.col(0).norm(), orth.col(1).norm(), orth.col(2).norm()});
  return static_cast<int>(std::ceil(max_g * longest));
}

/// Every reflection with 0 < |g| ≤ max_g and a non-zero potential coefficient.
template <class Candidate>
std::vector<Candidate> reflections_within(const CrystalPotential& potential, double max_g) {
  const int n = largest_index(potential.phase(), max_g);
  std::vector<Candidate> out;
  for (int h = -n; h <= n; ++h)
    for (int k = -n; k <= n; ++k)
      for (int l = -n; l <= n; ++l) {
        const Eigen::Vector3i hkl(h, k, l);
        const Eigen::Vector3d g = potential.reciprocal(hkl);
        if (hkl.isZero() || g.norm() > max_g) continue;
        const double coupling = std::abs(potential.elastic(hkl));
        // Systematically absent reflections (fcc mixed parity) couple to nothing.
        if (coupling > 1e-12 * std::abs(potential.elastic(Eigen::Vector3i::Zero()))) out.push_back({hkl, g, coupling});
      }
  return out;
}

/// σ_n = occupancy · Z²: the Rutherford cross-section's dependence on the atomic number for
/// scattering through large angles, which backscattering requires.
double backscatter_weight(const AtomSite& site) {
  const gemmi::Element el(site.element);
  const double z = el.atomic_number();
  if (!(z > 0)) fail("no atomic number for element '", site.element, "'");
  return site.occupancy * z * z;
}

}  // namespace

int potential_index_for(const Phase& phase, const BeamSetSpec& spec) {
  return 2 * largest_index(phase, spec.max_g_inv_A);
}

Eigen::VectorXcd BlochWaves::amplitudes(double depth_A) const {
  Eigen::VectorXcd phase(gamma.size());
  for (Eigen::Index j = 0; j < gamma.size(); ++j) phase[j] = alpha[j] * std::exp(2.0 * kPi * kI * gamma[j] * depth_A);
  return C * phase;
}

BlochWaveSolver::BlochWaveSolver(const CrystalPotential& potential, const BeamSetSpec& spec)
    : potential_(potential), spec_(spec), wavenumber_(potential.crystal_wavenumber()) {
  if (!(spec.max_g_inv_A > 0) || !(spec.strong_limit > 0) || !(spec.weak_limit >= spec.strong_limit))
    fail("beam set: need max |g| > 0 and 0 < strong limit ≤ weak limit, got ", spec.max_g_inv_A, " Å⁻¹, ",
         spec.strong_limit, ", ", spec.weak_limit);
  const int needed = potential_index_for(potential.phase(), spec);
  if (needed > potential.max_index())
    fail("beam set: reflections up to |g| = ", spec.max_g_inv_A, " Å⁻¹ need potential coefficients to index ", needed,
         ", the table holds ", potential.max_index());
  candidates_ = reflections_within<Candidate>(potential, spec.max_g_inv_A);
}

double BlochWaveSolver::excitation_error(const Eigen::Vector3d& direction, const Eigen::Vector3d& g) const {
  // s_g = (K² − |k + g|²) / 2K with k = K û: the distance of g from the Ewald sphere.
  return -(2.0 * wavenumber_ * direction.dot(g) + g.squaredNorm()) / (2.0 * wavenumber_);
}

BeamSet BlochWaveSolver::beams_for(const Eigen::Vector3d& direction) const {
  const Eigen::Vector3d u = direction.normalized();
  BeamSet set;
  set.strong.push_back({Eigen::Vector3i::Zero(), Eigen::Vector3d::Zero(), 0.0});
  for (const Candidate& c : candidates_) {
    const double s = excitation_error(u, c.g);
    const double w = wavenumber_ * std::abs(s) / c.coupling;
    if (w <= spec_.strong_limit)
      set.strong.push_back({c.hkl, c.g, s});
    else if (w <= spec_.weak_limit)
      set.weak.push_back({c.hkl, c.g, s});
  }
  return set;
}

Eigen::MatrixXcd BlochWaveSolver::structure_matrix(const BeamSet& beams) const {
  const auto& strong = beams.strong;
  const Eigen::Index n = static_cast<Eigen::Index>(strong.size());
  const std::complex<double> mean_absorption = kI * potential_.absorptive(Eigen::Vector3i::Zero());
  Eigen::MatrixXcd a(n, n);
  for (Eigen::Index i = 0; i < n; ++i)
    for (Eigen::Index j = 0; j < n; ++j)
      a(i, j) = i == j ? 2.0 * wavenumber_ * strong[i].excitation_error + mean_absorption
                       : potential_.total(strong[i].hkl - strong[j].hkl);
  // Bethe potentials: each weak beam w adds −U_{g−w} U_{w−h} / (2K s_w) to A_gh.
  Eigen::VectorXcd to_weak(n), from_weak(n);
  for (const Beam& w : beams.weak) {
    for (Eigen::Index i = 0; i < n; ++i) {
      to_weak[i] = potential_.total(strong[i].hkl - w.hkl);
      from_weak[i] = potential_.total(w.hkl - strong[i].hkl);
    }
    a.noalias() -= (to_weak * from_weak.transpose()) / (2.0 * wavenumber_ * w.excitation_error);
  }
  return a;
}

BlochWaves BlochWaveSolver::solve(const Eigen::Vector3d& direction, BeamSet beams) const {
  const Eigen::Vector3d u = direction.normalized();
  for (auto* list : {&beams.strong, &beams.weak})
    for (Beam& b : *list) b.excitation_error = excitation_error(u, b.g);
  if (beams.strong.empty() || !beams.strong[0].hkl.isZero()) fail("beam set: the first beam must be 000");
  BlochWaves waves;
  waves.wavenumber = wavenumber_;
  const Eigen::ComplexEigenSolver<Eigen::MatrixXcd> eigen(structure_matrix(beams));
  if (eigen.info() != Eigen::Success) fail("Bloch waves: the eigen-solution did not converge");
  waves.gamma = eigen.eigenvalues() / (2.0 * wavenumber_);
  waves.C = eigen.eigenvectors();
  const Eigen::VectorXcd incident = Eigen::VectorXcd::Unit(waves.C.rows(), 0);
  waves.alpha = waves.C.partialPivLu().solve(incident);
  waves.beams = std::move(beams);
  return waves;
}

double backscatter_intensity(const BlochWaves& waves, const Phase& phase, const DepthSpec& depth) {
  if (!(depth.mean_depth_A > 0)) fail("mean depth of backscattering must be positive, got ", depth.mean_depth_A, " Å");
  const Eigen::Index n = waves.gamma.size();
  const double ell = depth.mean_depth_A;
  // ∫ w(z) exp(2πi(γ_i − γ_j*) z) dz for w(z) = exp(−z/ℓ)/ℓ.
  Eigen::MatrixXcd depth_integral(n, n);
  for (Eigen::Index i = 0; i < n; ++i)
    for (Eigen::Index j = 0; j < n; ++j)
      depth_integral(i, j) = 1.0 / (1.0 - 2.0 * kPi * kI * ell * (waves.gamma[i] - std::conj(waves.gamma[j])));
  const auto& strong = waves.beams.strong;
  const Eigen::Index beams = static_cast<Eigen::Index>(strong.size());
  double total = 0, weights = 0;
  Eigen::MatrixXcd at_site(beams, beams);
  for (const AtomSite& site : phase.unit_cell_sites) {
    // The beams' interference at the site, averaged over the nucleus's thermal displacement (an
    // isotropic Gaussian of variance U per axis): ⟨e^{2πi q·δ}⟩ = e^{−2π² U q²} for q = g − h.
    for (Eigen::Index g = 0; g < beams; ++g)
      for (Eigen::Index h = 0; h < beams; ++h) {
        const Eigen::Vector3d q = strong[g].g - strong[h].g;
        const double phase_angle = 2.0 * kPi * (strong[g].hkl - strong[h].hkl).cast<double>().dot(site.fract);
        at_site(g, h) = std::polar(std::exp(-2.0 * kPi * kPi * site.u_iso_A2 * q.squaredNorm()), phase_angle);
      }
    // Σ_ij α_i α_j* D_ij Σ_gh C_gi C_hj* S_gh with S the site's interference matrix.
    const Eigen::MatrixXcd projected = waves.C.transpose() * at_site * waves.C.conjugate();
    const Eigen::MatrixXcd weighted = (waves.alpha * waves.alpha.adjoint()).cwiseProduct(depth_integral);
    const double sigma = backscatter_weight(site);
    total += sigma * weighted.cwiseProduct(projected).sum().real();
    weights += sigma;
  }
  return total / weights;
}

}  // namespace orderband
