// `orderband families`: plane-family table of one or more phases, or of an ordered/disordered pair.
#include <iostream>
#include <memory>
#include <optional>

#include "command.hpp"
#include "orderband/error.hpp"
#include "orderband/family_table_io.hpp"
#include "orderband/pair_catalog.hpp"
#include "orderband/phase_cif.hpp"
#include "orderband/sphere_file.hpp"
#include "orderband/version.hpp"
#include "progress.hpp"

namespace orderband::cli {

namespace {

struct FamiliesOptions {
  std::vector<std::string> cifs;
  std::string pair_name;
  std::string ordered, disordered;
  double kv = 20.0;
  double d_min = 0.8;
  double threshold = 0.5;
  TableFormat format = TableFormat::text;
  bool dynamical = false, quiet = false;
  int nside = 128;
  SphereCacheOptions cache;
};

/// Both phases' many-beam spheres (from the cache when there) and every family's band profiles on them.
DynamicalColumns dynamical_columns(const FamiliesOptions& o, const OrderingPair& pair,
                                   const std::vector<PairFamily>& rows) {
  DynamicalColumns d;
  d.spec.kilovolts = o.kv;
  d.spec.nside = o.nside;
  const std::string folder = o.cache.folder();
  std::vector<DynamicalSphere> spheres;
  for (const Phase* phase : {&pair.ordered, &pair.disordered}) {
    ProgressReporter bar("sphere " + phase->name, "directions", o.quiet);
    spheres.push_back(cached_dynamical_sphere(*phase, d.spec, folder, {kVersion, command_line(), phase->source},
                                              [&](size_t done, size_t total) { bar(done, total); }));
    bar.finish();
  }
  d.families = family_profile_contrasts(spheres[0].intensity, spheres[1].intensity, rows, d.bins);
  return d;
}

/// One table per phase of the given CIF files.
void print_phase_tables(const FamiliesOptions& o, const TableProvenance& prov) {
  std::vector<Phase> phases;
  std::vector<std::vector<PhaseFamily>> tables;
  for (const std::string& path : o.cifs) {
    phases.push_back(load_phase_cif(path));
    tables.push_back(phase_family_table(phases.back(), o.kv, o.d_min));
  }
  switch (o.format) {
    case TableFormat::csv:
      write_phase_families_csv(std::cout, phases, tables, prov);
      break;
    case TableFormat::json:
      write_phase_families_json(std::cout, phases, tables, prov);
      break;
    case TableFormat::text:
      for (size_t i = 0; i < phases.size(); ++i) {
        if (i) std::cout << '\n';
        write_phase_families_text(std::cout, phases[i], tables[i], prov);
      }
  }
}

/// The table of a pair: given by its two CIF files, or by name (default ni).
void print_pair_table(const FamiliesOptions& o, const TableProvenance& prov, bool explicit_pair) {
  const OrderingPair pair =
      explicit_pair ? load_pair(o.ordered, o.disordered) : load_named_pair(o.pair_name.empty() ? "ni" : o.pair_name);
  const std::vector<PairFamily> rows = pair_family_table(pair, o.kv, o.d_min);
  const std::optional<DynamicalColumns> dyn =
      o.dynamical ? std::optional<DynamicalColumns>(dynamical_columns(o, pair, rows)) : std::nullopt;
  const DynamicalColumns* d = dyn ? &*dyn : nullptr;
  switch (o.format) {
    case TableFormat::csv:
      write_pair_families_csv(std::cout, rows, prov, d);
      break;
    case TableFormat::json:
      write_pair_families_json(std::cout, pair, rows, prov, d);
      break;
    case TableFormat::text:
      write_pair_families_text(std::cout, pair, rows, prov, d);
      break;
  }
}

}  // namespace

std::function<int()> setup_families(CLI::App& sub) {
  auto o = std::make_shared<FamiliesOptions>();
  sub.add_option("cif", o->cifs, "CIF files: one table per phase (without these, a pair is shown)");
  sub.add_option("--pair", o->pair_name, "named pair from crystal-data/pairs.toml (ni, co, feal); default ni");
  sub.add_option("--ordered", o->ordered, "CIF of the ordered phase of a pair (with --disordered)");
  sub.add_option("--disordered", o->disordered, "CIF of the disordered phase of a pair (with --ordered)");
  sub.add_option("--kv", o->kv, "accelerating voltage (kV), in [1, 1000]")
      ->check(finite_within(1, 1000, false, false))
      ->capture_default_str();
  sub.add_option("--d-min", o->d_min, "smallest d-spacing listed (Å), in [0.3, 100]")
      ->check(finite_within(0.3, 100, false, false))
      ->capture_default_str();
  sub.add_option("--threshold", o->threshold,
                 "sensitivity at or above which a family counts as superlattice, in [-1, 1]")
      ->check(finite_within(-1, 1, false, false))
      ->capture_default_str();
  add_format_option(sub, o->format);
  sub.add_flag("--dynamical", o->dynamical,
               "add each family's band profiles on both phases' many-beam spheres (pairs only; a sphere not yet "
               "in the cache takes a few minutes at nside 128: about 8 for the nickel pair on 2 cores)");
  sub.add_option("--nside", o->nside,
                 "HEALPix nside of the spheres for --dynamical (power of two, 64 to 1024; coarser spheres leave the "
                 "narrowest profile bins empty)")
      ->check(CLI::Range(64, 1024))
      ->capture_default_str();
  add_sphere_cache_options(sub, o->cache);
  sub.add_flag("-q,--quiet", o->quiet, "no progress on stderr");
  sub.footer(
      "Without arguments: the shipped nickel-base pair (gamma-prime Ni3Al in gamma) at 20 kV.\n"
      "Examples:\n  orderband families\n  orderband families --pair co --kv 15 --format csv\n"
      "  orderband families crystal-data/ni-fcc.cif --d-min 1.0\n  orderband families --dynamical --d-min 1.0");

  return [o]() {
    if (!(o->kv > 0)) fail("--kv must be a positive voltage in kV, got ", o->kv);
    if (!(o->d_min > 0)) fail("--d-min must be a positive d-spacing in Å, got ", o->d_min);
    const bool explicit_pair = !o->ordered.empty() || !o->disordered.empty();
    if (explicit_pair && (o->ordered.empty() || o->disordered.empty()))
      fail("--ordered and --disordered go together: give both CIF files");
    if ((explicit_pair || !o->pair_name.empty()) && !o->cifs.empty())
      fail("give either CIF files (one table per phase) or a pair, not both");
    if (explicit_pair && !o->pair_name.empty()) fail("give either --pair or --ordered/--disordered, not both");
    if (o->dynamical && !o->cifs.empty())
      fail("--dynamical compares the two phases of a pair: give a pair, not CIF files");
    if (o->nside & (o->nside - 1)) fail("--nside must be a power of two, got ", o->nside);

    const TableProvenance prov{kVersion, command_line(), o->kv, o->d_min, o->threshold};
    if (!o->cifs.empty())
      print_phase_tables(*o, prov);
    else
      print_pair_table(*o, prov, explicit_pair);
    return 0;
  };
}

}  // namespace orderband::cli
