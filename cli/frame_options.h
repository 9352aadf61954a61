// The options that declare a set's body-fixed frame metadata (name, definition, pole, prime meridian, epoch):
// one group shared by compute, uncertainty and convert.
#pragma once

#include <CLI/CLI.hpp>
#include <string>

#include "polystokes/core/coefficient_set.h"

namespace polystokes::cli {

/// The frame metadata options as given; empty = not given.
struct FrameMetadataOptions {
  std::string name, definition;
  std::string pole;      ///< "RA,DEC": two angles (degrees, or each with deg / rad)
  std::string meridian;  ///< an angle (degrees, or with deg / rad)
  std::string epoch;     ///< ISO 8601 UTC
};

/// Registers --frame-name, --frame-definition, --frame-pole, --frame-meridian and --frame-epoch in a group.
/// The angles' syntax is checked while parsing (usage error); their ranges and the epoch when interpreted.
void add_frame_metadata_options(CLI::App* cmd, FrameMetadataOptions& frame);

/// The given fields, angles in degrees. Not checked against each other or against a set's metadata: the
/// library does that where the fields land (check_frame_metadata), throwing ConventionError (exit 2).
FrameMetadata frame_metadata_of(const FrameMetadataOptions& frame);

}  // namespace polystokes::cli
