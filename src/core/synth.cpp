// Synthetic scans: phase mixtures per point, kinematic rendering, truth.
#include "orderband/synth.hpp"

#include <algorithm>
#include <cmath>
#include <map>
#include <random>

#include "orderband/error.hpp"

namespace orderband {

std::vector<MixtureComponent> point_mixture(const Microstructure& m, const Eigen::Vector2d& p, double sigma_x_um,
                                            double sigma_y_um) {
  std::map<std::pair<int, bool>, MixtureComponent> acc;
  auto add = [&](const Eigen::Vector2d& x, double w) {
    const MicrostructureSample s = m.at(x);
    if (s.particle >= 0) {
      const Particle& q = m.particles()[s.particle];
      const int key = q.own_orientation ? -(s.particle + 1) : q.host_grain;
      auto& c = acc[{key, true}];
      c.orientation = q.orientation, c.ordered = true, c.key = key, c.weight += w;
      return;
    }
    const double ft = m.tertiary_at(x);
    const Rotation& g = m.grains()[s.grain].orientation;
    if (ft < 1) {
      auto& c = acc[{s.grain, false}];
      c.orientation = g, c.ordered = false, c.key = s.grain, c.weight += w * (1 - ft);
    }
    if (ft > 0) {
      auto& c = acc[{s.grain, true}];
      c.orientation = g, c.ordered = true, c.key = s.grain, c.weight += w * ft;
    }
  };
  if (sigma_x_um <= 0 && sigma_y_um <= 0) {
    add(p, 1.0);
  } else {
    double total = 0;
    for (int a = -2; a <= 2; ++a)
      for (int b = -2; b <= 2; ++b) total += std::exp(-0.5 * (a * a + b * b));
    for (int a = -2; a <= 2; ++a)
      for (int b = -2; b <= 2; ++b)
        add(p + Eigen::Vector2d(sigma_x_um * a, sigma_y_um * b), std::exp(-0.5 * (a * a + b * b)) / total);
  }
  std::vector<MixtureComponent> out;
  for (auto& [k, c] : acc) out.push_back(c);
  return out;
}

PatternRenderer::PatternRenderer(const DetectorGeometry& geometry, const KinematicBandModel& ordered,
                                 const KinematicBandModel& disordered, double counts_per_px, double falloff,
                                 BackgroundShape shape, double gamma)
    : ordered_(ordered), disordered_(disordered), counts_(counts_per_px), gamma_(gamma) {
  if (!(counts_per_px > 0)) fail("counts per pixel must be positive, got ", counts_per_px);
  if (!(gamma > 0.2 && gamma < 5)) fail("detector gamma must be within (0.2, 5), got ", gamma);
  if (!(falloff >= 0 && falloff < 1)) fail("background falloff must be within [0, 1), got ", falloff);
  width_ = geometry.width();
  height_ = geometry.height();
  sub_ = geometry.spec().binning;
  // Smooth background: brightest a little above the pattern centre, quadratic falloff.
  const Eigen::Vector2d centre(geometry.spec().pc_px.x(), geometry.spec().pc_px.y() - 0.1 * height_);
  double r_max = 0;
  for (const Eigen::Vector2d& corner : {Eigen::Vector2d(0, 0), Eigen::Vector2d(width_, 0), Eigen::Vector2d(0, height_),
                                        Eigen::Vector2d(width_, height_)})
    r_max = std::max(r_max, (corner - centre).norm());
  background_.resize(static_cast<size_t>(width_) * height_);
  double sum = 0;
  for (int i = 0; i < height_; ++i)
    for (int j = 0; j < width_; ++j) {
      const double r = (Eigen::Vector2d(j + 0.5, i + 0.5) - centre).norm() / r_max;
      double b = 1 - falloff * r * r;
      if (shape == BackgroundShape::gaussian) {
        const double s2 = 2 * 0.35 * 0.35;
        b = 1 - falloff * (1 - std::exp(-r * r / s2)) / (1 - std::exp(-1 / s2));
      } else if (shape == BackgroundShape::linear) {
        b = 1 - falloff * (0.8 * (i + 0.5) / height_ + 0.2 * (j + 0.5) / width_);
      }
      sum += background_[static_cast<size_t>(i) * width_ + j] = static_cast<float>(b);
    }
  for (float& b : background_) b = static_cast<float>(b * background_.size() / sum);
}

void PatternRenderer::use_spheres(const PhaseSpheres& spheres, double contrast) {
  if (!spheres.ordered || !spheres.disordered) fail("many-beam rendering needs the spheres of both phases");
  if (!(contrast > 0 && contrast <= 1)) fail("many-beam contrast must be within (0, 1], got ", contrast);
  spheres_ = spheres;
  sphere_contrast_ = contrast;
  for (int phase = 0; phase < 2; ++phase) {
    const SphereMap& m = phase ? *spheres.disordered : *spheres.ordered;
    double sum = 0;
    for (long p = 0; p < m.grid.npix(); ++p) sum += m.value(p);
    sphere_mean_[phase] = sum / m.grid.npix();
    if (!(sphere_mean_[phase] > 0)) fail("a phase's sphere has no intensity");
  }
}

void PatternRenderer::add_band_model(const std::vector<MixtureComponent>& mix, const Directions& d,
                                     std::vector<double>& acc) const {
  const size_t m = acc.size();
  std::vector<float> dot(m);
  for (const MixtureComponent& c : mix) {
    const KinematicBandModel& model = c.ordered ? ordered_ : disordered_;
    const Eigen::Matrix3d g = c.orientation.matrix();
    for (const ModelBand& band : model.bands()) {
      const Eigen::Vector3d ns = g.transpose() * band.normal;  // crystal → sample frame
      const float nx = static_cast<float>(ns.x()), ny = static_cast<float>(ns.y()), nz = static_cast<float>(ns.z());
      const float reach = static_cast<float>(std::sin(band.theta_b * model.profile_reach()));
      for (size_t k = 0; k < m; ++k) dot[k] = nx * d.x[k] + ny * d.y[k] + nz * d.z[k];
      const double w = c.weight * band.weight, inv_theta = 1.0 / band.theta_b;
      const int table = model.families()[band.family].table;
      for (size_t k = 0; k < m; ++k)
        if (std::abs(dot[k]) < reach) {
          const double x = dot[k];  // |x| < 0.07: asin x = x + x³/6 to better than 1e-8
          acc[k] += w * model.profile_table((x + x * x * x / 6) * inv_theta, table);
        }
    }
  }
}

std::shared_ptr<const PatternRenderer::SphereModulation> PatternRenderer::sphere_modulation(
    const MixtureComponent& c, const Directions& d, const DetectorGeometry& geometry) const {
  const Eigen::Vector4d q = c.orientation.quaternion();
  const Eigen::Vector3d pc(geometry.spec().pc_px.x(), geometry.spec().pc_px.y(), geometry.spec().distance_px);
  const std::pair<int, bool> key{c.key, c.ordered};
  {
    std::lock_guard<std::mutex> lock(modulation_cache_->mutex);
    const auto it = modulation_cache_->entries.find(key);
    if (it != modulation_cache_->entries.end() && it->second->quaternion == q && it->second->pattern_centre == pc)
      return it->second;
  }
  auto m = std::make_shared<SphereModulation>();
  m->quaternion = q;
  m->pattern_centre = pc;
  m->value.resize(d.x.size());
  const SphereMap& sphere = c.ordered ? *spheres_.ordered : *spheres_.disordered;
  const double mean = sphere_mean_[c.ordered ? 0 : 1];
  const Eigen::Matrix3d g = c.orientation.matrix();  // sample → crystal frame
  long pixel[4];
  double weight[4];
  for (size_t k = 0; k < d.x.size(); ++k) {
    sphere.grid.interpolation(g * Eigen::Vector3d(d.x[k], d.y[k], d.z[k]), pixel, weight);
    double v = 0;
    for (int i = 0; i < 4; ++i) v += weight[i] * sphere.value(pixel[i]);
    m->value[k] = sphere_contrast_ * (v / mean - 1);
  }
  std::lock_guard<std::mutex> lock(modulation_cache_->mutex);
  modulation_cache_->entries[key] = m;
  return m;
}

void PatternRenderer::add_spheres(const std::vector<MixtureComponent>& mix, const Directions& d,
                                  const DetectorGeometry& geometry, std::vector<double>& acc) const {
  for (const MixtureComponent& c : mix) {
    const std::shared_ptr<const SphereModulation> m = sphere_modulation(c, d, geometry);
    for (size_t k = 0; k < acc.size(); ++k) acc[k] += c.weight * m->value[k];
  }
}

void PatternRenderer::expected(const std::vector<MixtureComponent>& mix, const DetectorGeometry& geometry,
                               float* out) const {
  const size_t n = static_cast<size_t>(width_) * height_;
  const int ss = sub_ * sub_;
  const size_t m = n * ss;
  Directions d{std::vector<float>(m), std::vector<float>(m), std::vector<float>(m)};
  size_t q = 0;
  for (int i = 0; i < height_; ++i)
    for (int j = 0; j < width_; ++j)
      for (int a = 0; a < sub_; ++a)
        for (int b = 0; b < sub_; ++b, ++q) {
          const Eigen::Vector3d v = geometry.direction_sample({j + (b + 0.5) / sub_, i + (a + 0.5) / sub_}).vec();
          d.x[q] = static_cast<float>(v.x()), d.y[q] = static_cast<float>(v.y()), d.z[q] = static_cast<float>(v.z());
        }
  std::vector<double> acc(m, 0.0);
  if (spheres_.ordered)
    add_spheres(mix, d, geometry, acc);
  else
    add_band_model(mix, d, acc);
  double total_weight = 0;
  for (const MixtureComponent& c : mix) total_weight += c.weight;
  for (size_t p = 0; p < n; ++p) {
    double v = 0;
    for (int s = 0; s < ss; ++s) v += acc[p * ss + s];
    const double signal = background_[p] * (total_weight + v / ss);
    out[p] = static_cast<float>(counts_ * (gamma_ == 1 ? signal : std::pow(std::max(signal, 0.0), gamma_)));
  }
}

void PatternRenderer::render(const std::vector<MixtureComponent>& mix, const DetectorGeometry& geometry,
                             std::uint64_t seed, SampleType type, double scale_8bit, std::uint16_t* out) const {
  const size_t n = static_cast<size_t>(width_) * height_;
  std::vector<float> mean(n);
  expected(mix, geometry, mean.data());
  std::mt19937_64 rng(seed);
  const double max_value = type == SampleType::uint8 ? 255.0 : 65535.0;
  for (size_t q = 0; q < n; ++q) {
    double counts = std::poisson_distribution<long>(mean[q])(rng);
    if (type == SampleType::uint8) counts = std::round(counts * scale_8bit);
    out[q] = static_cast<std::uint16_t>(std::min(counts, max_value));
  }
}

SynthTruth compute_truth(const Microstructure& m, const ScanGrid& grid, double beam_sigma_x_um,
                         double beam_sigma_y_um) {
  SynthTruth t;
  const size_t n = grid.count();
  t.ordered_fraction.resize(n);
  t.grain.resize(n);
  t.particle.resize(n);
  t.orientation.resize(n);
  t.ordered_at_centre.resize(n);
  for (size_t k = 0; k < n; ++k) {
    const Eigen::Vector2d p = grid.position_um(grid.point(k));
    double f = 0;
    for (const MixtureComponent& c : point_mixture(m, p, beam_sigma_x_um, beam_sigma_y_um))
      f += c.ordered ? c.weight : 0.0;
    t.ordered_fraction[k] = static_cast<float>(f);
    const MicrostructureSample s = m.at(p);
    // The lattice the point carries: its grain's, a coherent particle's host grain's, or, for a
    // particle with its own orientation, a label of its own after the grains.
    t.grain[k] = s.grain;
    if (s.particle >= 0) {
      const Particle& q = m.particles()[s.particle];
      t.grain[k] = q.own_orientation ? static_cast<int32_t>(m.grains().size()) + q.id : q.host_grain;
    }
    t.particle[k] = s.particle >= 0 ? m.particles()[s.particle].id : 0;
    t.orientation[k] = s.particle >= 0 ? m.particles()[s.particle].orientation : m.grains()[s.grain].orientation;
    t.ordered_at_centre[k] = s.particle >= 0;
  }
  // Area fractions on a fine raster: 4 × 4 samples in each point's cell.
  double primary = 0, secondary = 0, tertiary = 0, total = 0;
  const double dx = grid.step_um, dy = grid.row_spacing_um();
  for (size_t k = 0; k < n; ++k) {
    const Eigen::Vector2d p = grid.position_um(grid.point(k));
    for (int a = 0; a < 4; ++a)
      for (int b = 0; b < 4; ++b) {
        const Eigen::Vector2d q = p + Eigen::Vector2d((b - 1.5) / 4 * dx, (a - 1.5) / 4 * dy);
        const MicrostructureSample s = m.at(q);
        total += 1;
        if (s.particle < 0) {
          tertiary += m.tertiary_at(q);
          continue;
        }
        (m.particles()[s.particle].cls == ParticleClass::primary ? primary : secondary) += 1;
      }
  }
  t.primary_area_fraction = primary / total;
  t.secondary_area_fraction = secondary / total;
  t.tertiary_area_fraction = tertiary / total;
  t.ordered_area_fraction = t.primary_area_fraction + t.secondary_area_fraction + t.tertiary_area_fraction;
  double ecd[2] = {0, 0};
  int count[2] = {0, 0};
  const double x0 = -0.5 * dx, x1 = grid.field_width_um() - 0.5 * dx;
  const double y0 = -0.5 * dy, y1 = grid.field_height_um() - 0.5 * dy;
  for (const Particle& q : m.particles()) {
    const double d = q.section_ecd_um();
    if (d <= 0 || q.centre_um.x() < x0 || q.centre_um.x() >= x1 || q.centre_um.y() < y0 || q.centre_um.y() >= y1)
      continue;
    const int c = q.cls == ParticleClass::primary ? 0 : 1;
    ecd[c] += d;
    count[c] += 1;
  }
  t.primary_count = count[0];
  t.secondary_count = count[1];
  t.primary_mean_ecd_um = count[0] ? ecd[0] / count[0] : 0;
  t.secondary_mean_ecd_um = count[1] ? ecd[1] / count[1] : 0;
  return t;
}

RenderModels render_models(const SynthScenario& s, const OrderingPair& pair) {
  const RendererVariant& v = s.variant;
  Phase ordered_phase = pair.ordered;
  if (v.lattice_misfit != 0) {
    const UnitCell& c = ordered_phase.cell;
    const double k = 1 + v.lattice_misfit;
    ordered_phase.cell = UnitCell(c.a_A * k, c.b_A * k, c.c_A * k, c.alpha_deg, c.beta_deg, c.gamma_deg);
  }
  // Both phases carry the pair's families (those of the ordered phase as the pair's table lists
  // them), whatever the misfit.
  RenderModels models{
      KinematicBandModel(ordered_phase, s.kv, with_families_of(s.band, ordered_phase, pair.ordered)),
      KinematicBandModel(pair.disordered, s.kv, with_families_of(s.band, pair.disordered, pair.ordered))};
  // Which families are superlattice families (by the pair's sensitivity, as the estimator
  // decides it): the ordered phase's other families are its fundamental ones.
  std::vector<Eigen::Vector3i> superlattice;
  for (const PairFamily& f : pair_family_table(pair, s.kv, s.band.d_min_A))
    if (f.sensitivity >= 0.5) superlattice.push_back(f.family.hkl);
  auto factor_of = [&](const Eigen::Vector3i& hkl) {
    if (v.family_contrast_spread == 0) return 1.0;
    // A per-family factor that depends only on the family and the seed: the same in both phases.
    std::uint64_t h = v.family_contrast_seed * 0x9E3779B97F4A7C15ULL;
    for (int i = 0; i < 3; ++i) h = (h ^ static_cast<std::uint64_t>(hkl[i] + 1000)) * 0x100000001B3ULL;
    std::mt19937_64 rng(h);
    return 1 + v.family_contrast_spread * std::uniform_real_distribution<double>(-1, 1)(rng);
  };
  for (int phase = 0; phase < 2; ++phase) {
    KinematicBandModel& model = phase ? models.ordered : models.disordered;
    for (size_t f = 0; f < model.families().size(); ++f) {
      const ModelFamily& fam = model.families()[f];
      double factor = factor_of(fam.hkl), edge = fam.edge_contrast;
      const bool fundamental = std::find(superlattice.begin(), superlattice.end(), fam.hkl) == superlattice.end();
      if (phase == 1 && fundamental) {
        factor *= v.ordered_fundamental_ratio;
        if (!std::isnan(v.ordered_fundamental_edge_contrast)) edge = v.ordered_fundamental_edge_contrast;
      }
      if (factor != 1 || edge != fam.edge_contrast) model.adjust_family(f, factor, edge);
    }
  }
  return models;
}

DetectorGeometrySpec render_geometry(const SynthScenario& s) {
  DetectorGeometrySpec g = s.geometry;
  g.pc_px += s.variant.pc_error_px.head<2>();
  g.distance_px += s.variant.pc_error_px.z();
  return g;
}

namespace {

std::uint64_t point_seed(std::uint64_t seed, size_t index) {
  // splitmix64 of (seed, index): independent streams per point, whatever the thread schedule.
  std::uint64_t z = seed + 0x9e3779b97f4a7c15ull * (index + 1);
  z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ull;
  z = (z ^ (z >> 27)) * 0x94d049bb133111ebull;
  return z ^ (z >> 31);
}

}  // namespace

SyntheticScan::SyntheticScan(const SynthScenario& scenario, const OrderingPair& pair, const PhaseSpheres& spheres)
    : scenario_(scenario),
      models_(render_models(scenario, pair)),
      micro_(scenario.micro),
      geometry_(render_geometry(scenario)),
      renderer_(geometry_, models_.ordered, models_.disordered, scenario.counts_per_px, scenario.background_falloff,
                scenario.variant.background, scenario.variant.detector_gamma),
      beam_x_um_(scenario.beam_sigma_nm * 1e-3),
      beam_y_um_(beam_x_um_ * scenario.variant.beam_elongation),
      scale_8bit_(250.0 / (scenario.counts_per_px * 1.6 *
                           *std::max_element(renderer_.background().begin(), renderer_.background().end()))) {
  if (scenario.pattern_model == PatternModelKind::many_beam)
    renderer_.use_spheres(spheres, scenario.many_beam.contrast);
}

void SyntheticScan::render_row(int row, std::uint16_t* out) const {
  const SynthScenario& s = scenario_;
  const size_t px = pixels();
#pragma omp parallel for schedule(dynamic)
  for (int c = 0; c < s.grid.cols; ++c) {
    const GridPoint p{row, c};
    const Eigen::Vector2d pos = s.grid.position_um(p);
    const DetectorGeometry g = s.pc_drift ? geometry_.at_beam_offset(pos.x(), pos.y()) : geometry_;
    renderer_.render(point_mixture(micro_, pos, beam_x_um_, beam_y_um_), g, point_seed(s.seed, s.grid.index(p)),
                     s.sample_type, scale_8bit_, out + static_cast<size_t>(c) * px);
  }
}

SynthTruth SyntheticScan::truth() const { return compute_truth(micro_, scenario_.grid, beam_x_um_, beam_y_um_); }

}  // namespace orderband
