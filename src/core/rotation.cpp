// Rotation conversions, composition, symmetry reduction, misorientation and mean.
#include "orderband/rotation.hpp"

#include <Eigen/Dense>
#include <cmath>
#include <random>

#include "orderband/error.hpp"
#include "orderband/units.hpp"

namespace orderband {
namespace {
Eigen::Quaterniond canonical(Eigen::Quaterniond q) {
  q.normalize();
  if (q.w() < 0) q.coeffs() = -q.coeffs();
  return q;
}
double wrap_2pi(double a) {
  a = std::fmod(a, 2 * kPi);
  if (a < 0) a += 2 * kPi;
  if (a >= 2 * kPi) a = 0;
  return a;
}
}  // namespace

Rotation::Rotation(const Eigen::Quaterniond& q) : q_(canonical(q)) {}

Rotation Rotation::from_quaternion(double q0, double q1, double q2, double q3) {
  const double n = std::sqrt(q0 * q0 + q1 * q1 + q2 * q2 + q3 * q3);
  if (!(n > 0) || !std::isfinite(n)) fail("quaternion (", q0, ", ", q1, ", ", q2, ", ", q3, ") is not a rotation");
  return Rotation(Eigen::Quaterniond(q0, q1, q2, q3));
}

Rotation Rotation::from_bunge(double phi1, double Phi, double phi2) {
  // Rowenhorst et al. 2015, Euler -> quaternion with P = -1.
  const double c = std::cos(Phi / 2), s = std::sin(Phi / 2);
  const double sigma = (phi1 + phi2) / 2, delta = (phi1 - phi2) / 2;
  return from_quaternion(c * std::cos(sigma), s * std::cos(delta), s * std::sin(delta), c * std::sin(sigma));
}

Rotation Rotation::from_matrix(const Eigen::Matrix3d& g) {
  Eigen::JacobiSVD<Eigen::Matrix3d> svd(g, Eigen::ComputeFullU | Eigen::ComputeFullV);
  const Eigen::Matrix3d r = svd.matrixU() * svd.matrixV().transpose();
  if (r.determinant() < 0) fail("matrix is not a proper rotation (determinant < 0)");
  return Rotation(Eigen::Quaterniond(Eigen::Matrix3d(r.transpose())));  // active matrix = g transposed
}

Rotation Rotation::from_axis_angle(const Eigen::Vector3d& axis, double angle) {
  if (!(axis.norm() > 0)) fail("rotation axis must be non-zero");
  return Rotation(Eigen::Quaterniond(Eigen::AngleAxisd(angle, axis.normalized())));
}

Eigen::Matrix3d Rotation::matrix() const { return q_.toRotationMatrix().transpose(); }

Eigen::Vector3d Rotation::bunge() const {
  // Rowenhorst et al. 2015, quaternion -> Euler (P = -1), robust at Phi = 0 and pi.
  const double q0 = q_.w(), q1 = q_.x(), q2 = q_.y(), q3 = q_.z();
  const double q03 = q0 * q0 + q3 * q3, q12 = q1 * q1 + q2 * q2;
  const double chi = std::sqrt(q03 * q12);
  double phi1, Phi, phi2;
  if (q12 < 1e-30) {
    Phi = 0;
    phi1 = std::atan2(2 * q0 * q3, q0 * q0 - q3 * q3);
    phi2 = 0;
  } else if (q03 < 1e-30) {
    Phi = kPi;
    phi1 = std::atan2(2 * q1 * q2, q1 * q1 - q2 * q2);
    phi2 = 0;
  } else {
    Phi = std::atan2(2 * chi, q03 - q12);
    phi1 = std::atan2((q1 * q3 + q0 * q2) / chi, (q0 * q1 - q2 * q3) / chi);
    phi2 = std::atan2((q1 * q3 - q0 * q2) / chi, (q0 * q1 + q2 * q3) / chi);
  }
  return {wrap_2pi(phi1), Phi, wrap_2pi(phi2)};
}

double Rotation::angle() const { return 2 * std::atan2(q_.vec().norm(), std::abs(q_.w())); }

Eigen::Vector3d Rotation::axis() const {
  const double n = q_.vec().norm();
  return n > 0 ? Eigen::Vector3d(q_.vec() / n) : Eigen::Vector3d(0, 0, 1);
}

Rotation Rotation::operator*(const Rotation& b) const {
  // a.g b.g = (R_a^T)(R_b^T) = (R_b R_a)^T, so the active quaternion is q_b q_a.
  return Rotation(b.q_ * q_);
}

Rotation Rotation::inverse() const { return Rotation(q_.conjugate()); }

CrystalSymmetry::CrystalSymmetry(const std::vector<Eigen::Matrix3d>& laue_rotations) {
  ops_.clear();
  // A crystal-frame rotation S acts on g as S g (matrix product), so S is
  // stored as the Rotation whose passive matrix is S.
  for (const auto& s : laue_rotations) ops_.push_back(Rotation::from_matrix(s));
  if (ops_.empty()) ops_.push_back(Rotation());
}

CrystalSymmetry CrystalSymmetry::cubic() {
  std::vector<Eigen::Matrix3d> mats;
  // All signed permutation matrices with determinant +1.
  const int perms[6][3] = {{0, 1, 2}, {1, 2, 0}, {2, 0, 1}, {0, 2, 1}, {2, 1, 0}, {1, 0, 2}};
  for (const auto& p : perms)
    for (int signs = 0; signs < 8; ++signs) {
      Eigen::Matrix3d m = Eigen::Matrix3d::Zero();
      for (int i = 0; i < 3; ++i) m(i, p[i]) = (signs >> i & 1) ? -1.0 : 1.0;
      if (m.determinant() > 0) mats.push_back(m);
    }
  return CrystalSymmetry(mats);
}

Rotation CrystalSymmetry::reduce(const Rotation& g) const {
  Rotation best = g;
  double best_w = -1;
  for (const Rotation& s : ops_) {
    const Rotation c = s * g;
    const double w = std::abs(c.hamilton().w());
    if (w > best_w + 1e-12) {
      best_w = w;
      best = c;
    }
  }
  return best;
}

Rotation CrystalSymmetry::misorientation(const Rotation& a, const Rotation& b) const { return reduce(b * a.inverse()); }

double CrystalSymmetry::misorientation_angle(const Rotation& a, const Rotation& b) const {
  const Eigen::Quaterniond d = (b * a.inverse()).hamilton();
  double best = 0;
  for (const Rotation& s : ops_) {
    // S Delta has the Hamilton quaternion q_Delta q_S; only its scalar part is needed.
    const Eigen::Quaterniond& q = s.hamilton();
    best = std::max(best, std::abs(d.w() * q.w() - d.vec().dot(q.vec())));
  }
  return 2 * std::acos(std::min(1.0, best));
}

Rotation CrystalSymmetry::nearest_equivalent(const Rotation& g, const Rotation& reference) const {
  Rotation best = g;
  double best_dot = -1;
  for (const Rotation& s : ops_) {
    const Rotation c = s * g;
    const double dot = std::abs(c.hamilton().coeffs().dot(reference.hamilton().coeffs()));
    if (dot > best_dot + 1e-12) {
      best_dot = dot;
      best = c;
    }
  }
  return best;
}

Rotation CrystalSymmetry::mean(const std::vector<Rotation>& set) const {
  if (set.empty()) fail("mean orientation of an empty set");
  Rotation m = set.front();
  for (int iteration = 0; iteration < 20; ++iteration) {
    Eigen::Vector4d sum = Eigen::Vector4d::Zero();  // Eigen order (x, y, z, w)
    for (const Rotation& g : set) {
      Eigen::Vector4d c = nearest_equivalent(g, m).hamilton().coeffs();
      if (c.dot(m.hamilton().coeffs()) < 0) c = -c;
      sum += c;
    }
    const Rotation next = Rotation::from_quaternion(sum[3], sum[0], sum[1], sum[2]);
    const double change = 1 - std::abs(next.hamilton().coeffs().dot(m.hamilton().coeffs()));
    m = next;
    if (change < 1e-15) break;
  }
  return m;
}

std::vector<Rotation> random_rotations(size_t count, std::uint64_t seed) {
  std::mt19937_64 rng(seed);
  std::uniform_real_distribution<double> u(0.0, 1.0);
  std::vector<Rotation> out;
  out.reserve(count);
  for (size_t i = 0; i < count; ++i) {
    const double u1 = u(rng), u2 = u(rng), u3 = u(rng);
    const double a = std::sqrt(1 - u1), b = std::sqrt(u1);
    out.push_back(Rotation::from_quaternion(a * std::sin(2 * kPi * u2), a * std::cos(2 * kPi * u2),
                                            b * std::sin(2 * kPi * u3), b * std::cos(2 * kPi * u3)));
  }
  return out;
}

}  // namespace orderband
