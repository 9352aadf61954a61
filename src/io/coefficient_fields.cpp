#include "io/coefficient_fields.h"

#include <algorithm>
#include <type_traits>

namespace polystokes::coefficient_io {

namespace {

// A field holding one member of the set; its kind follows from the member's type.
template <typename Member>
HeaderField field(Section section, const char* text_key, const char* comment, const char* json_key,
                  int json_rank, Member CoefficientSet::*member) {
  HeaderField out{section, text_key, comment, json_key, json_rank, Kind::text};
  if constexpr (std::is_same_v<Member, std::string>) {
    out.text = member;
  } else if constexpr (std::is_same_v<Member, double>) {
    out.kind = Kind::real;
    out.real = member;
  } else if constexpr (std::is_same_v<Member, LengthUnit>) {
    out.kind = Kind::unit;
    out.unit = member;
  } else if constexpr (std::is_same_v<Member, Eigen::Vector3d>) {
    out.kind = Kind::vector;
    out.vector = member;
  } else {
    static_assert(std::is_same_v<Member, std::vector<std::string>>, "no field kind holds this member type");
    out.kind = Kind::text_list;
    out.list = member;
  }
  return out;
}

// An optional field of the frame metadata.
template <typename Member>
HeaderField field(Section section, const char* text_key, const char* json_key, int json_rank,
                  std::optional<Member> FrameMetadata::*member) {
  HeaderField out{section, text_key, "", json_key, json_rank, Kind::optional_text};
  if constexpr (std::is_same_v<Member, std::string>) {
    out.optional_text = member;
  } else {
    static_assert(std::is_same_v<Member, double>, "no optional field kind holds this member type");
    out.kind = Kind::optional_real;
    out.optional_real = member;
  }
  return out;
}

// A field whose kind names the members it holds.
HeaderField field(Section section, const char* text_key, const char* comment, const char* json_key,
                  int json_rank, Kind kind) {
  return HeaderField{section, text_key, comment, json_key, json_rank, kind};
}

}  // namespace

const std::vector<HeaderField>& header_fields() {
  using S = CoefficientSet;
  static const std::vector<HeaderField> fields = {
      field(Section::body, "label", "", "body", 0, &S::body),
      field(Section::body, "gm_m3_s2",
            "# G times the mass (m^3 s^-2); mass (kg) and volume (m^3) are 0 when unknown\n", "gm", 2,
            &S::gm),
      field(Section::body, "mass_kg", "", "mass", 11, &S::mass),
      field(Section::body, "volume_m3", "", "volume", 12, &S::volume),
      field(Section::body, "center_of_mass_m", "# centre of mass in the mesh frame (m)\n", "center_of_mass",
            10, &S::center_of_mass),
      field(Section::body, "mesh_length_unit", "# length unit the source mesh was given in\n",
            "mesh_length_unit", 13, &S::length_unit),
      field(
          Section::expansion, "degree",
          "# U(r, lat, lon) = GM/r sum_n (R/r)^n sum_m P_nm(sin lat) (C_nm cos(m lon) + S_nm sin(m lon)), "
          "with\n# R the reference radius; valid outside the Brillouin sphere (radius about the origin, m; 0 "
          "= unknown)\n",
          "degree", 1, Kind::degree),
      field(Section::expansion, "reference_radius_m", "", "reference_radius", 3, &S::reference_radius),
      field(Section::expansion, "brillouin_radius_m", "", "brillouin_radius", 4, &S::brillouin_radius),
      field(Section::expansion, "normalization", "# normalization of P_nm: {}\n", "normalization", 5,
            Kind::normalization),
      field(Section::expansion, "condon_shortley_phase",
            "# yes: P_nm carries the Condon-Shortley phase (-1)^m\n", "condon_shortley", 6, Kind::phase),
      field(Section::expansion, "zonal_column", "# C: the m = 0 column holds C_n0; J: it holds J_n = -C_n0\n",
            "zonal_as_j", 7, Kind::zonal),
      field(Section::expansion, "origin",
            "# expansion origin: label and position in the mesh frame (m), or unknown\n", "origin.label", 8,
            Kind::origin_kind),
      field(Section::expansion, "origin_m", "", "origin.position", 8, Kind::position),
      field(Section::expansion, "frame",
            "# expansion axes: label and each axis as a unit vector in mesh-frame components, or unknown\n",
            "frame.label", 9, Kind::frame_label),
      field(Section::expansion, "frame_x_axis", "", "frame.axes", 9, Kind::axes),
      field(Section::expansion, "frame_name", "frame.name", 9, &FrameMetadata::name),
      field(Section::expansion, "frame_definition", "frame.definition", 9, &FrameMetadata::definition),
      field(Section::expansion, "frame_pole_ra_deg", "frame.pole_ra_deg", 9, &FrameMetadata::pole_ra),
      field(Section::expansion, "frame_pole_dec_deg", "frame.pole_dec_deg", 9, &FrameMetadata::pole_dec),
      field(Section::expansion, "frame_meridian_deg", "frame.meridian_deg", 9, &FrameMetadata::meridian),
      field(Section::expansion, "frame_epoch", "frame.epoch", 9, &FrameMetadata::epoch),
      field(Section::provenance, "created", "", "created", 14, &S::created),
      field(Section::provenance, "history", "", "history", 15, &S::history),
      field(Section::provenance, "note", "", "notes", 16, &S::notes),
  };
  return fields;
}

bool is_declared_frame_name(const HeaderField& field, const CoefficientSet& set) {
  return field.optional_text == &FrameMetadata::name && set.frame == FrameKind::declared;
}

bool is_written(const HeaderField& field, const CoefficientSet& set) {
  if (is_declared_frame_name(field, set)) return false;
  if (field.kind == Kind::optional_text) return (set.frame_metadata.*field.optional_text).has_value();
  if (field.kind == Kind::optional_real) return (set.frame_metadata.*field.optional_real).has_value();
  return true;
}

std::vector<const HeaderField*> fields_of(Section section, bool json_order) {
  std::vector<const HeaderField*> out;
  for (const HeaderField& f : header_fields())
    if (f.section == section) out.push_back(&f);
  if (json_order)
    std::stable_sort(out.begin(), out.end(),
                     [](const HeaderField* a, const HeaderField* b) { return a->json_rank < b->json_rank; });
  return out;
}

std::vector<const HeaderField*> json_ordered_fields() {
  std::vector<const HeaderField*> out;
  for (const HeaderField& f : header_fields()) out.push_back(&f);
  std::stable_sort(out.begin(), out.end(),
                   [](const HeaderField* a, const HeaderField* b) { return a->json_rank < b->json_rank; });
  return out;
}

std::vector<std::string> text_keys(const HeaderField& field) {
  if (field.kind != Kind::axes) return {field.text_key};
  std::vector<std::string> keys;
  for (char axis : {'x', 'y', 'z'}) {
    std::string key = field.text_key;
    key[key.find('x')] = axis;
    keys.push_back(key);
  }
  return keys;
}

const std::vector<RegionField>& region_fields() {
  static const std::vector<RegionField> fields = [] {
    std::vector<RegionField> out;
    const auto text = [&](const char* t, const char* j, std::string Region::*m) {
      RegionField f{t, j, Kind::text};
      f.text = m;
      out.push_back(f);
    };
    const auto real = [&](const char* t, const char* j, double Region::*m) {
      RegionField f{t, j, Kind::real};
      f.real = m;
      out.push_back(f);
    };
    text("mesh_file", "mesh", &Region::mesh);
    text("sha256", "sha256", &Region::checksum);
    RegionField unit{"length_unit", "unit", Kind::unit};
    unit.unit = &Region::unit;
    out.push_back(unit);
    real("density_kg_m3", "density", &Region::density);
    real("volume_m3", "volume", &Region::volume);
    RegionField faces{"faces", "faces", Kind::count};
    faces.count = &Region::faces;
    out.push_back(faces);
    return out;
  }();
  return fields;
}

}  // namespace polystokes::coefficient_io
