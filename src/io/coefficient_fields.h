// The one field table of the coefficient formats: every field of a set with its text key, its JSON key, how
// it is spelled and which members it holds. The text and JSON writers and readers all walk these tables, so
// a new field is one row here plus, for a new spelling, one case in each form.
#pragma once

#include <Eigen/Core>
#include <optional>
#include <string>
#include <vector>

#include "polystokes/core/coefficient_set.h"

namespace polystokes::coefficient_io {

/// Text sections that hold keys, in file order ([coefficients] and [end] hold the table).
enum class Section { body, expansion, region, provenance };

/// How a field is spelled and which members of the set it holds.
enum class Kind {
  text,           ///< a std::string member; text: double-quoted with escapes; JSON: a string (UTF-8)
  real,           ///< a double member; finite
  vector,         ///< an Eigen::Vector3d member; text "x y z"; JSON [x, y, z]
  count,          ///< an integer member (Region::faces)
  degree,         ///< CoefficientSet::degree, 0..INT_MAX-1
  normalization,  ///< convention.normalization by its word (normalization_names)
  phase,          ///< convention.condon_shortley; text yes | no; JSON true | false
  zonal,          ///< convention.zonal_as_j; text J | C; JSON true | false
  position,       ///< origin_in_mesh and origin_known; text "x y z" or unknown; JSON [x, y, z] or null
  axes,           ///< axes_in_mesh and axes_known; text three keys (x, y, z), each "x y z" or unknown; JSON
                  ///< three rows or null
  text_list,      ///< a std::vector<std::string> member; text: the key once per entry; JSON: an array
  unit,           ///< a LengthUnit member by its word ("m", "km"), spelled as text
  origin_kind,    ///< CoefficientSet::origin by its word (origin_names), spelled as text
  frame_label,    ///< CoefficientSet::frame and a declared frame's name (frame_label), spelled as text
  optional_text,  ///< a std::optional<std::string> of frame_metadata, spelled as text; absent: no key
  optional_real,  ///< a std::optional<double> of frame_metadata, spelled as real; absent: no key
};

/// One field of the set's header (sections [body], [expansion], [provenance]).
struct HeaderField {
  Section section;
  const char* text_key;  ///< axes: the x axis's key; y and z replace the 'x'
  const char* comment;   ///< text comment lines written before the key ("" none); normalization: "{}" is
                         ///< replaced by the words
  const char* json_key;  ///< top-level key, or "parent.key" inside an object
  int json_rank;         ///< place among the JSON keys (the JSON form orders them its own way)
  Kind kind;
  std::string CoefficientSet::*text = nullptr;
  double CoefficientSet::*real = nullptr;
  Eigen::Vector3d CoefficientSet::*vector = nullptr;
  std::vector<std::string> CoefficientSet::*list = nullptr;
  LengthUnit CoefficientSet::*unit = nullptr;
  std::optional<std::string> FrameMetadata::*optional_text = nullptr;
  std::optional<double> FrameMetadata::*optional_real = nullptr;
};

/// True for the frame name field of a set whose frame is declared: its label in `frame` is the name, so the
/// field is not written, and readers refuse it.
bool is_declared_frame_name(const HeaderField& field, const CoefficientSet& set);

/// Whether the writers write `field` for `set`: not for an absent optional field, nor for
/// is_declared_frame_name.
bool is_written(const HeaderField& field, const CoefficientSet& set);

/// The header fields in text order (the order the text form writes and reads them).
const std::vector<HeaderField>& header_fields();

/// The header fields of `section` in text order, or in JSON order (json_rank) when `json_order`.
std::vector<const HeaderField*> fields_of(Section section, bool json_order = false);

/// Every header field in JSON order.
std::vector<const HeaderField*> json_ordered_fields();

/// The text keys of a header field (three for axes).
std::vector<std::string> text_keys(const HeaderField& field);

/// One field of a [region] section / "regions" entry; the two forms list them in the same order.
struct RegionField {
  const char* text_key;
  const char* json_key;
  Kind kind;  ///< text, real, count or unit
  std::string Region::*text = nullptr;
  LengthUnit Region::*unit = nullptr;
  double Region::*real = nullptr;
  long Region::*count = nullptr;
};

/// The region fields in file order.
const std::vector<RegionField>& region_fields();

/// Comment written at the start of each [region] section.
inline constexpr const char* kRegionComment =
    "# one constant-density piece: density kg m^-3 (negative for a void), volume m^3\n";

}  // namespace polystokes::coefficient_io
