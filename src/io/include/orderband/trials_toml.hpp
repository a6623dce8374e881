// Trials descriptions (TOML): the trials of a heat-treatment screen and their target window.
#pragma once

#include <string>

#include "orderband/trials.hpp"

namespace orderband {

/// Reads a trials description (TOML); one clear line per problem.
TrialsConfig read_trials_config(const std::string& path);

}  // namespace orderband
