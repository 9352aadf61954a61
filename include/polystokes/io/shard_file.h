// Shard files of a Monte Carlo uncertainty run: the part of a run one machine computed, written so that the
// merge on another machine gets back identical values (docs/uncertainty.md).
#pragma once

#include <string>
#include <utility>
#include <vector>

#include "polystokes/uncertainty/uncertainty.h"

namespace polystokes {

/// Shard file text, format "polystokes-uncertainty-shard 1" (docs/uncertainty.md): settings one per line,
/// the nominal set embedded in the coefficient text format, then one line per sample; doubles written in
/// shortest round-trip form, so parse_shard_text gives back identical values.
std::string format_shard_text(const UncertaintyShard& shard);
/// Throws FormatError "source:line: problem".
UncertaintyShard parse_shard_text(const std::string& text, const std::string& source_name);

/// The settings lines every shard of a run must share, in file order, as (key, value): what the file
/// writes first and what merge_shards compares between shards.
std::vector<std::pair<std::string, std::string>> shard_run_lines(const UncertaintyShard& shard);

}  // namespace polystokes
