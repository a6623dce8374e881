// `orderband sphere`: a phase's backscattered intensity over every direction from many-beam dynamics.
#include <chrono>
#include <cstdlib>
#include <filesystem>
#include <iostream>
#include <memory>

#include "command.hpp"
#include "orderband/error.hpp"
#include "orderband/phase_cif.hpp"
#include "orderband/sphere_file.hpp"
#include "orderband/version.hpp"
#include "progress.hpp"

namespace orderband::cli {

namespace {

struct SphereOptions {
  std::string cif, output;
  SphereCacheOptions cache;
  bool quiet = false;
  int threads = 0;
  double mean_depth_nm = 10;
  DynamicalSphereSpec spec;
};

void register_options(CLI::App& sub, SphereOptions& o) {
  sub.add_option("cif", o.cif, "CIF file of the phase")->required()->check(CLI::ExistingFile);
  sub.add_option("-o,--output", o.output, "output .npy file (a .json side-car and a .png picture go beside it)")
      ->required();
  sub.add_option("--kv", o.spec.kilovolts, "accelerating voltage (kV), in [1, 300]")
      ->check(finite_within(1, 300, false, false))
      ->capture_default_str();
  sub.add_option("--nside", o.spec.nside, "HEALPix nside (power of two, 4 to 1024)")
      ->check(CLI::Range(4, 1024))
      ->capture_default_str();
  sub.add_option("--max-g", o.spec.beams.max_g_inv_A, "largest reciprocal vector |g| of the beams (1/Å), in (0, 4]")
      ->check(finite_within(0, 4, true, false))
      ->capture_default_str();
  sub.add_option("--strong-limit", o.spec.beams.strong_limit,
                 "beams with excitation error × extinction distance up to this are solved exactly")
      ->check(finite_within(0, 10000, true, false))
      ->capture_default_str();
  sub.add_option("--weak-limit", o.spec.beams.weak_limit,
                 "beams up to this (beyond the strong limit) enter as Bethe potentials")
      ->check(finite_within(0, 100000, true, false))
      ->capture_default_str();
  sub.add_option("--absorption", o.spec.absorption.proportional,
                 "proportional absorption: U'_g = this × U_g, in [0, 1)")
      ->check(finite_within(0, 1, false, true))
      ->capture_default_str();
  sub.add_option("--mean-depth-nm", o.mean_depth_nm, "mean depth of the backscattering events (nm), in (0, 1000]")
      ->check(finite_within(0, 1000, true, false))
      ->capture_default_str();
  add_sphere_cache_options(sub, o.cache);
  sub.add_flag("-q,--quiet", o.quiet, "no progress on stderr");
  add_threads_option(sub, o.threads);
  sub.footer(
      "Solves the Bloch waves on the Laue group's fundamental sector and unfolds the rest by symmetry;\n"
      "a sphere already in the cache (same CIF bytes, same parameters) is loaded instead.\n"
      "Example:\n  orderband sphere crystal-data/ni3al-gamma-prime.cif --kv 20 --nside 64 -o ni3al-20kV.npy");
}

}  // namespace

std::function<int()> setup_sphere(CLI::App& sub) {
  auto o = std::make_shared<SphereOptions>();
  register_options(sub, *o);
  return [o]() {
    if (o->spec.nside & (o->spec.nside - 1)) fail("--nside must be a power of two, got ", o->spec.nside);
    if (o->spec.beams.weak_limit < o->spec.beams.strong_limit)
      fail("--weak-limit (", o->spec.beams.weak_limit, ") must be at least --strong-limit (",
           o->spec.beams.strong_limit, ")");
    apply_threads(o->threads);
    o->spec.depth.mean_depth_A = 10 * o->mean_depth_nm;
    const Phase phase = load_phase_cif(o->cif);
    const std::string folder = o->cache.folder();
    const auto start = std::chrono::steady_clock::now();
    const SphereProvenance provenance{kVersion, command_line(), o->cif};
    bool cached = false;
    ProgressReporter bar("sphere", "directions", o->quiet);
    const DynamicalSphere sphere = cached_dynamical_sphere(
        phase, o->spec, folder, provenance, [&](size_t d, size_t t) { bar(d, t); }, &cached);
    bar.finish();
    if (const auto parent = std::filesystem::path(o->output).parent_path(); !parent.empty())
      std::filesystem::create_directories(parent);
    write_sphere_file(o->output, phase, sphere, o->spec, provenance);
    const double seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
    std::cout << "sphere of " << phase.name << " at " << o->spec.kilovolts << " kV: nside " << o->spec.nside << ", "
              << sphere.intensity.grid.npix() << " directions, " << sphere.directions_solved << " solved (mean "
              << sphere.mean_strong_beams << " strong beams), " << (cached ? "loaded from the cache" : "computed")
              << " in " << seconds << " s -> " << o->output << "\n";
    return 0;
  };
}

}  // namespace orderband::cli
