// Many-beam dynamical diffraction by Bloch waves: the beam set, the structure matrix, its
// eigen-solution, the wave field with depth and the backscattered intensity by reciprocity.
#pragma once

#include <Eigen/Core>
#include <complex>
#include <vector>

#include "orderband/crystal_potential.hpp"

namespace orderband {

/// One diffracted beam: its reflection, reciprocal vector (Å⁻¹, crystal frame) and excitation
/// error s_g (Å⁻¹) for the incident direction it was chosen for.
struct Beam {
  Eigen::Vector3i hkl{0, 0, 0};
  Eigen::Vector3d g{0, 0, 0};
  double excitation_error = 0;
};

/// Which beams enter the calculation. A beam's strength is measured by w_g = |s_g| ξ_g
/// = K |s_g| / |U_g|, its excitation error in units of its own two-beam gap (w ≈ 0 at the Bragg
/// condition; large w: the beam is barely excited). Beams with |g| ≤ max_g and w_g ≤
/// strong_limit enter the structure matrix; those with strong_limit < w_g ≤ weak_limit enter
/// it only through their Bethe potentials (second-order perturbation; Bethe, Ann. Phys. 87
/// (1928) 55; the form used in Humphreys, Rep. Prog. Phys. 42 (1979) 1825). The defaults are
/// our choice, tested by doubling the limits (the intensity changes little).
struct BeamSetSpec {
  double max_g_inv_A = 1.6;  ///< |g| ≤ this (d ≥ 0.625 Å)
  double strong_limit = 8;
  double weak_limit = 40;
};

/// The beam set of dynamical spheres, from a convergence study (bench/beam_convergence_bench: 150
/// random directions at 20 kV, each set of intensities divided by its mean, weak = 5 × strong):
/// doubling both limits changed Ni's intensities by 9.3 % rms from 32 to 64, 3.1 % from 64 to 128,
/// 2.2 % from 128 to 256 and 0.77 % from 256 to 512, and Ni₃Al's (a four-atom cell) by 1.07 % from
/// 256 to 512 and 0.78 % from 384 to 768 (DEVELOPERS.md, "Dynamical spheres"): the first limit at
/// which both phases of the nickel pair change by less than 1 %.
inline constexpr BeamSetSpec kSphereBeams{1.6, 384, 1920};

struct BeamSet {
  std::vector<Beam> strong;  ///< strong[0] is the transmitted beam 000
  std::vector<Beam> weak;
};

/// The depth distribution of backscattering events, w(z) = exp(−z/ℓ)/ℓ. The default mean depth
/// ℓ = 10 nm puts 95 % of the events within 30 nm, inside the 10–40 nm depth sensitivity
/// reported for EBSD at 20 kV (Dingley, J. Microsc. 213 (2004) 214); it is a parameter because
/// it depends on voltage, material and tilt.
struct DepthSpec {
  double mean_depth_A = 100;
};

/// The Bloch-wave solution for one incident direction (surface normal along the beam):
///   ψ_g(z) = Σ_j α_j C_g^(j) exp(2πi γ^(j) z),
/// A C^(j) = 2 K γ^(j) C^(j) with A_gg = 2K s_g + i U′_0 and A_gh = U_{g−h} + i U′_{g−h} (plus
/// the Bethe corrections of the weak beams), K the wave number inside the crystal, and the
/// excitations α from ψ_g(0) = δ_g0 (Hirsch et al. 1965, ch. 8 and 12; De Graef 2003, ch. 6).
struct BlochWaves {
  BeamSet beams;
  Eigen::VectorXcd gamma;  ///< eigenvalues γ^(j) (Å⁻¹); Im γ > 0 decays
  Eigen::MatrixXcd C;      ///< column j: Bloch wave j's beam coefficients
  Eigen::VectorXcd alpha;  ///< excitation of each Bloch wave
  double wavenumber = 0;   ///< K inside the crystal (Å⁻¹)

  /// The beam amplitudes ψ_g at depth z (Å), in the order of beams.strong.
  Eigen::VectorXcd amplitudes(double depth_A) const;
};

/// The largest Miller index the potential table needs for a beam set: every difference of two
/// reflections with |g| ≤ spec.max_g_inv_A.
int potential_index_for(const Phase& phase, const BeamSetSpec& spec);

/// Chooses beam sets and solves the dynamical equations for one phase at one voltage.
class BlochWaveSolver {
 public:
  BlochWaveSolver(const CrystalPotential& potential, const BeamSetSpec& spec);

  /// The beams for an incident direction (unit vector, crystal frame).
  BeamSet beams_for(const Eigen::Vector3d& direction) const;
  /// The solution for a direction with the beams beams_for() chooses.
  BlochWaves solve(const Eigen::Vector3d& direction) const { return solve(direction, beams_for(direction)); }
  /// The solution with given beams (their excitation errors are recomputed for the direction).
  BlochWaves solve(const Eigen::Vector3d& direction, BeamSet beams) const;

  /// The structure matrix A of a beam set (Bethe corrections included).
  Eigen::MatrixXcd structure_matrix(const BeamSet& beams) const;
  double excitation_error(const Eigen::Vector3d& direction, const Eigen::Vector3d& g) const;
  const CrystalPotential& potential() const { return potential_; }

 private:
  struct Candidate {
    Eigen::Vector3i hkl;
    Eigen::Vector3d g;
    double coupling;  ///< |U_g| (Å⁻²)
  };
  const CrystalPotential& potential_;
  BeamSetSpec spec_;
  std::vector<Candidate> candidates_;
  double wavenumber_;
};

/// The backscattered intensity leaving the crystal along −direction, by reciprocity the
/// probability density of the wave field incident along `direction` at the atom sites, summed over
/// the cell's atoms with weight occupancy · Z² (the Rutherford cross-section's Z² for scattering
/// through large angles) and over depth with the distribution `depth` (Winkelmann, Trager-Cowan,
/// Sweeney, Day & Parbrook, Ultramicroscopy 107 (2007) 414):
///   I = Σ_n σ_n Σ_ij α_i α_j* X_i(n) X_j(n)* / (1 − 2πiℓ(γ_i − γ_j*)),  X_j(n) = Σ_g C_g^(j) e^{2πi g·r_n}.
/// Normalised so that a crystal without diffraction or absorption gives 1.
double backscatter_intensity(const BlochWaves& waves, const Phase& phase, const DepthSpec& depth);

}  // namespace orderband
