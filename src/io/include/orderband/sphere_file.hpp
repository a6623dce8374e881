// Dynamical spheres on disk: a float32 .npy of the HEALPix values, a JSON side-car, a picture, a cache.
#pragma once

#include <optional>
#include <string>

#include "orderband/dynamical_sphere.hpp"

namespace orderband {

/// What produced a sphere file, recorded in its side-car.
struct SphereProvenance {
  std::string version, command, cif_path;
};

/// The key of a sphere in the cache: a hash over the CIF's bytes, every parameter of the spec and
/// the format version of the calculation (bumped whenever the physics changes).
std::string sphere_cache_key(const std::string& cif_path, const DynamicalSphereSpec& spec);

/// Writes `path` (.npy, shape 1 × 12·nside², HEALPix RING order), `path` with .json (the spec,
/// units, provenance and cache key) and with .png (the upper hemisphere, stereographic), each
/// atomically.
void write_sphere_file(const std::string& path, const Phase& phase, const DynamicalSphere& sphere,
                       const DynamicalSphereSpec& spec, const SphereProvenance& provenance);

/// Reads a sphere file written by write_sphere_file; with `expected_key`, returns nothing when the
/// side-car's key differs (a stale cache entry). Throws on a damaged file.
std::optional<DynamicalSphere> read_sphere_file(const std::string& path, const std::string& expected_key = "");

/// The default cache folder: $XDG_CACHE_HOME/orderband/spheres, else ~/.cache/orderband/spheres,
/// else empty (no cache).
std::string default_sphere_cache_folder();

/// The sphere of a phase: from `cache_folder` when it holds one with the same key, else computed
/// (with `progress`) and stored there (an empty folder: no cache). `from_cache` tells which.
DynamicalSphere cached_dynamical_sphere(const Phase& phase, const DynamicalSphereSpec& spec,
                                        const std::string& cache_folder, const SphereProvenance& provenance,
                                        const ProgressFn& progress, bool* from_cache = nullptr);

/// The side-car's path for a sphere file (.npy replaced or followed by .json; likewise .png).
std::string sphere_sidecar_path(const std::string& path, const std::string& extension);

}  // namespace orderband
