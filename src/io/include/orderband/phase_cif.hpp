// Phases read from CIF files (gemmi).
#pragma once

#include <string>

#include "orderband/phase.hpp"

namespace orderband {

/// Reads the first data block of a CIF file. Throws orderband::Error naming
/// the file for: a missing or unreadable file, a CIF without a complete cell,
/// without atom sites, with an unknown space group, or with an element that
/// has no electron scattering factor.
Phase load_phase_cif(const std::string& path);

/// Same, from CIF text in memory; `origin` names it in error messages.
Phase parse_phase_cif(const std::string& cif_text, const std::string& origin);

}  // namespace orderband
