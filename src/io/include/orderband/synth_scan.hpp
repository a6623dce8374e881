// Synthetic scans on disk: scenario files read, complete scans written.
#pragma once

#include <cstddef>
#include <functional>
#include <optional>
#include <string>

#include "orderband/dynamical_sphere.hpp"
#include "orderband/synth.hpp"

namespace orderband {

/// Reads a scenario; one clear error line per problem (negative sizes,
/// fractions above 1, unknown phase files, unknown keys).
SynthScenario read_synth_scenario(const std::string& path);
SynthScenario parse_synth_scenario(const std::string& toml_text, const std::string& path);

using SynthProgress = std::function<void(size_t done, size_t total)>;
/// Progress of a phase's sphere (its name first).
using SphereProgress = std::function<void(const std::string& phase, size_t done, size_t total)>;

/// The spheres of both phases of a many-beam scenario (none for a kinematic one), loaded from the
/// scenario's sphere cache or computed and cached there.
struct ManyBeamSpheres {
  std::optional<DynamicalSphere> ordered, disordered;
  PhaseSpheres maps() const {
    return ordered ? PhaseSpheres{&ordered->intensity, &disordered->intensity} : PhaseSpheres{};
  }
};
ManyBeamSpheres many_beam_spheres(const SynthScenario& scenario, const OrderingPair& pair,
                                  const std::string& command_line, const SphereProgress& progress = {});

/// Writes a complete synthetic scan into `folder` (created if needed):
/// scan.toml, patterns.raw, truth.json, truth_fraction.npy, truth_grains.npy,
/// truth_orientations.csv, truth_particles.csv. Multi-threaded over points;
/// byte-identical for a seed whatever the thread count. `command_line` goes
/// into the provenance. A many-beam scenario first loads (or computes and caches) both phases'
/// spheres, reporting through `sphere_progress`.
void write_synthetic_scan(const SynthScenario& scenario, const std::string& folder, const std::string& command_line,
                          const SynthProgress& progress = {}, const SphereProgress& sphere_progress = {});

}  // namespace orderband
