#include "frame_options.h"

#include "quantity_options.h"

namespace polystokes::cli {

void add_frame_metadata_options(CLI::App* cmd, FrameMetadataOptions& frame) {
  auto* group = cmd->add_option_group(
      "frame metadata",
      "What the set's body-fixed frame is, as you state it (kept in the set, shown by report)");
  group->add_option("--frame-name", frame.name, "Name of the body-fixed frame (free text)");
  group->add_option("--frame-definition", frame.definition, "How the frame is defined (free text)");
  group
      ->add_option("--frame-pole", frame.pole,
                   "Right ascension and declination of the frame's +z pole: RA,DEC in degrees (or with deg, "
                   "rad); RA in [0, 360), Dec in [-90, 90]")
      ->check(quantity_syntax(QuantityKind::angle, true));
  group
      ->add_option("--frame-meridian", frame.meridian,
                   "Prime meridian angle W at --frame-epoch, degrees (or with deg, rad), in [0, 360)")
      ->check(quantity_syntax(QuantityKind::angle));
  group->add_option("--frame-epoch", frame.epoch,
                    "UTC epoch of the pole and meridian, ISO 8601: YYYY-MM-DDTHH:MM:SS[.fraction]Z");
}

FrameMetadata frame_metadata_of(const FrameMetadataOptions& frame) {
  FrameMetadata out;
  // No length is involved: the unit argument only satisfies the quantity parser's signature.
  const LengthUnit no_length = LengthUnit::meter;
  if (!frame.name.empty()) out.name = frame.name;
  if (!frame.definition.empty()) out.definition = frame.definition;
  if (!frame.pole.empty()) {
    const auto angles = parse_quantity_list(frame.pole, QuantityKind::angle, no_length, "--frame-pole", 2);
    out.pole_ra = angles[0].value;
    out.pole_dec = angles[1].value;
  }
  if (!frame.meridian.empty())
    out.meridian = option_quantity(frame.meridian, QuantityKind::angle, no_length, "--frame-meridian").value;
  if (!frame.epoch.empty()) out.epoch = frame.epoch;
  return out;
}

}  // namespace polystokes::cli
