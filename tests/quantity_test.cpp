// The unit grammar and the strict number rule (docs/units.md): unit factors from the SI definitions, the
// numbers people mistype refused, and the bare-length rule.
#include "polystokes/core/quantity.h"

#include <boost/math/constants/constants.hpp>
#include <catch2/catch.hpp>
#include <cstdlib>

#include "polystokes/core/errors.h"

using namespace polystokes;

TEST_CASE("the strict number rule reads decimal numbers exactly as strtod does", "[quantity]") {
  // glibc's strtod rounds correctly (ISO C 7.22.1.3 with IEC 60559), an independent reading of each text.
  for (const char* text : {"0", "-0", "+4", "2.5", ".5", "5.", "1e3", "-3E-2", "6.02214076e23", "0.1",
                           "2.2250738585072014e-308", "1.7976931348623157e308"}) {
    CAPTURE(text);
    const auto value = parse_strict_number(text);
    REQUIRE(value);
    CHECK(*value == std::strtod(text, nullptr));
  }
}

TEST_CASE("the strict number rule refuses what strtod or stod would silently accept", "[quantity]") {
  // Each of these is taken by std::stod (leading blanks, nan, inf, hexadecimal) or is incomplete.
  for (const char* text : {"", " 1", "1 ", "nan", "inf", "-inf", "0x10", "1e", "e5", ".", "+", "1.2.3", "1,5",
                           "1d3", "1e999", "--1", "١"}) {
    CAPTURE(text);
    CHECK_FALSE(parse_strict_number(text));
  }
}

TEST_CASE("unit suffixes convert by their SI definitions", "[quantity]") {
  // BIPM 2019, The International System of Units (SI brochure, 9th ed.): km = 10^3 m, g = 10^-3 kg,
  // cm = 10^-2 m, min = 60 s, h = 3600 s, d = 86 400 s (table 8); the degree is pi/180 rad.
  const LengthUnit m = LengthUnit::meter;
  CHECK(parse_quantity("2.5km", QuantityKind::length, m, "x").value == 2500.0);
  CHECK(parse_quantity("2500m", QuantityKind::length, LengthUnit::kilometer, "x").value == 2500.0);
  CHECK(parse_quantity("508.118588km3/s2", QuantityKind::gm, m, "x").value == 508.118588e9);
  CHECK(parse_quantity("5e11m^3/s^2", QuantityKind::gm, m, "x").value == 5e11);
  CHECK(parse_quantity("1.9g/cm3", QuantityKind::density, m, "x").value == 1900.0);
  CHECK(parse_quantity("-1500kg/m^3", QuantityKind::density, m, "x").value == -1500.0);
  CHECK(parse_quantity("4.2h", QuantityKind::time, m, "x").value == 4.2 * 3600.0);
  CHECK(parse_quantity("1d", QuantityKind::time, m, "x").value == 86400.0);
  CHECK(parse_quantity("90deg", QuantityKind::angle, m, "x").value == 90.0);
  const double half_pi = boost::math::constants::half_pi<double>();
  CHECK_THAT(parse_quantity(std::to_string(half_pi) + "rad", QuantityKind::angle, m, "x").value,
             Catch::Matchers::WithinRel(90.0, 1e-6));
}

TEST_CASE("a bare length follows the command's unit; a bare GM, mass or density is SI whatever the unit",
          "[quantity]") {
  // The one unit rule of docs/units.md.
  const LengthUnit km = LengthUnit::kilometer;
  CHECK(parse_quantity("2.5", QuantityKind::length, km, "x").value == 2500.0);
  CHECK(parse_quantity("2.5", QuantityKind::length, LengthUnit::meter, "x").value == 2.5);
  CHECK(parse_quantity("508.118588", QuantityKind::gm, km, "x").value == 508.118588);
  CHECK(parse_quantity("1900", QuantityKind::density, km, "x").value == 1900.0);
  CHECK(parse_quantity("7.6e12", QuantityKind::mass, km, "x").value == 7.6e12);
}

TEST_CASE("a wrong unit or a malformed value is refused with a message naming the option", "[quantity]") {
  const LengthUnit m = LengthUnit::meter;
  CHECK_THROWS_AS(parse_quantity("508.1km", QuantityKind::gm, m, "--gm"), ConventionError);
  CHECK_THROWS_WITH(parse_quantity("508.1km", QuantityKind::gm, m, "--gm"),
                    Catch::Matchers::StartsWith("--gm: '508.1km': unit 'km' is not a unit of GM"));
  CHECK_THROWS_WITH(parse_quantity("2.5 km", QuantityKind::length, m, "--ref-radius"),
                    Catch::Matchers::StartsWith("--ref-radius: '2.5 km'"));
  CHECK_THROWS_WITH(parse_quantity("nan", QuantityKind::density, m, "--density"),
                    Catch::Matchers::Contains("is not a density"));
  CHECK_THROWS_WITH(parse_quantity("1e400km", QuantityKind::length, m, "--x"),
                    Catch::Matchers::Contains("out of the range of double"));
  CHECK(quantity_syntax_error("2km", QuantityKind::length, false).empty());
  CHECK_FALSE(quantity_syntax_error("2kg", QuantityKind::length, false).empty());
}

TEST_CASE("a list gives a unit on every value or none", "[quantity]") {
  const auto list =
      parse_quantity_list("1km,2km,-3km", QuantityKind::length, LengthUnit::meter, "--shift", 3);
  CHECK(list[0].value == 1000.0);
  CHECK(list[2].value == -3000.0);
  const auto bare = parse_quantity_list("1,2,3", QuantityKind::length, LengthUnit::kilometer, "--shift", 3);
  CHECK(bare[1].value == 2000.0);
  CHECK_THROWS_WITH(parse_quantity_list("1km,2,3", QuantityKind::length, LengthUnit::meter, "--shift", 3),
                    Catch::Matchers::Contains("on every value or none"));
  CHECK_THROWS_WITH(parse_quantity_list("1,2", QuantityKind::length, LengthUnit::meter, "--shift", 3),
                    Catch::Matchers::Contains("is not 3 comma-separated"));
}

TEST_CASE("an interpreted value is echoed in its base unit with what was given", "[quantity]") {
  const Quantity radius = parse_quantity("2.5", QuantityKind::length, LengthUnit::kilometer, "x");
  CHECK(describe_quantity(radius, QuantityKind::length) == "2500 m (given as 2.5 km)");
  const Quantity gm = parse_quantity("508.118588km3/s2", QuantityKind::gm, LengthUnit::meter, "x");
  CHECK(describe_quantity(gm, QuantityKind::gm) == "508118588000 m^3 s^-2 (given as 508.118588 km3/s2)");
  const Quantity density = parse_quantity("1900kg/m3", QuantityKind::density, LengthUnit::meter, "x");
  CHECK(describe_quantity(density, QuantityKind::density) == "1900 kg m^-3");
}
