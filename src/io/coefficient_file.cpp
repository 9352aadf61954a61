#include "polystokes/io/coefficient_file.h"

#include <algorithm>
#include <cctype>
#include <string_view>

#include "polystokes/core/errors.h"
#include "polystokes/io/output_file.h"

namespace polystokes {
namespace {

std::string source_name_of(const std::string& path) { return path == "-" ? "<stdin>" : path; }

// Writer errors carry no path of their own; the file that was not written is added here.
template <typename Format>
std::string formatted_for(const std::string& path, Format format) {
  try {
    return format();
  } catch (const OutputError& error) {
    throw OutputError(source_name_of(path) + ": " + error.what());
  } catch (const ConventionError& error) {
    throw ConventionError(source_name_of(path) + ": " + error.what());
  }
}

}  // namespace

void write_coefficient_file(const CoefficientSet& set, const std::string& path) {
  write_coefficient_files(set, {{path, CoefficientForm::text}});
}

CoefficientSet read_coefficient_file(const std::string& path) {
  const std::string text = read_file(path);
  const size_t first = text.find_first_not_of(" \t\r\n");
  if (first != std::string::npos && text[first] == '{')
    return parse_coefficient_json(text, source_name_of(path));
  return parse_coefficient_text(text, source_name_of(path));
}

void write_coefficient_json(const CoefficientSet& set, const std::string& path) {
  write_coefficient_files(set, {{path, CoefficientForm::json}});
}

CoefficientForm coefficient_form_for(const std::string& path) {
  constexpr std::string_view suffix = ".json";
  if (path.size() < suffix.size()) return CoefficientForm::text;
  const std::string_view end = std::string_view(path).substr(path.size() - suffix.size());
  const bool json = std::equal(end.begin(), end.end(), suffix.begin(), [](char a, char b) {
    return std::tolower(static_cast<unsigned char>(a)) == b;
  });
  return json ? CoefficientForm::json : CoefficientForm::text;
}

void write_coefficient_files(const CoefficientSet& set, const std::vector<CoefficientOutput>& outputs) {
  OutputGroup group;
  for (const CoefficientOutput& output : outputs) {
    group.stage(output.path, formatted_for(output.path, [&] {
                  return output.form == CoefficientForm::json ? format_coefficient_json(set)
                                                              : format_coefficient_text(set);
                }));
  }
  group.commit();
}

}  // namespace polystokes
