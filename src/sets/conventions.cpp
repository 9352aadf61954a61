#include "polystokes/sets/conventions.h"

#include <fmt/format.h>

#include <cmath>

#include "polystokes/core/coefficient_set.h"
#include "polystokes/core/errors.h"

namespace polystokes {

const std::vector<NormalizationName>& normalization_names() {
  static const std::vector<NormalizationName> names = {
      {Normalization::fully, "fully", "fully normalized (4pi)", "4pi"},
      {Normalization::unnormalized, "unnormalized", "unnormalized", ""},
      {Normalization::schmidt, "schmidt", "Schmidt semi-normalized", ""},
      {Normalization::orthonormal, "orthonormal", "orthonormal", ""},
  };
  return names;
}

namespace {

const NormalizationName& name_of(Normalization normalization) {
  for (const NormalizationName& name : normalization_names())
    if (name.value == normalization) return name;
  throw ConventionError(fmt::format("normalization {} has no name", static_cast<int>(normalization)));
}

}  // namespace

std::string to_string(Normalization normalization) { return name_of(normalization).word; }

std::string describe(Normalization normalization) { return name_of(normalization).description; }

Normalization parse_normalization(const std::string& text) {
  for (const NormalizationName& name : normalization_names())
    if (text == name.word) return name.value;
  throw ConventionError("unknown normalization '" + text + "' (expected " + normalization_choices(false) +
                        ")");
}

std::vector<std::string> normalization_words() {
  std::vector<std::string> words;
  for (const NormalizationName& name : normalization_names()) words.push_back(name.word);
  return words;
}

std::string normalization_choices(bool with_hints) {
  const auto& names = normalization_names();
  std::string text;
  for (size_t i = 0; i < names.size(); ++i) {
    if (i > 0) text += i + 1 == names.size() ? " or " : ", ";
    text += names[i].word;
    if (with_hints && *names[i].hint) text += fmt::format(" ({})", names[i].hint);
  }
  return text;
}

double legendre_normalization(Normalization normalization, int n, int m) {
  if (m < 0 || m > n) throw ConventionError(fmt::format("invalid degree/order n = {}, m = {}", n, m));
  if (normalization == Normalization::unnormalized) return 1.0;
  // (n-m)!/(n+m)! = prod_{k=n-m+1}^{n+m} 1/k, taken under the square root term by term.
  double ratio = 1.0;
  for (int k = n - m + 1; k <= n + m; ++k) ratio /= std::sqrt(double(k));
  const double delta = m == 0 ? 1.0 : 2.0;
  switch (normalization) {
    case Normalization::schmidt:
      return std::sqrt(delta) * ratio;
    case Normalization::fully:
      return std::sqrt(delta * (2.0 * n + 1.0)) * ratio;
    case Normalization::orthonormal:
      return std::sqrt(delta * (2.0 * n + 1.0) / (4.0 * M_PI)) * ratio;
    case Normalization::unnormalized:
      break;
  }
  return 1.0;
}

namespace {

// N_X / N_fully for the three normalized conventions, without the common factorial part.
double relative_to_fully(Normalization normalization, int n) {
  switch (normalization) {
    case Normalization::fully:
      return 1.0;
    case Normalization::schmidt:
      return 1.0 / std::sqrt(2.0 * n + 1.0);
    case Normalization::orthonormal:
      return 1.0 / std::sqrt(4.0 * M_PI);
    case Normalization::unnormalized:
      break;
  }
  throw ConventionError("unnormalized has no finite ratio to fully normalized at every degree");
}

}  // namespace

double coefficient_factor(const Convention& from, const Convention& to, int n, int m) {
  if (m < 0 || m > n) throw ConventionError(fmt::format("invalid degree/order n = {}, m = {}", n, m));
  // C_X P_X is invariant, so C_to = C_from * N_from / N_to; the phase (-1)^m moves with the functions.
  double factor = 1.0;
  if (from.normalization != to.normalization) {
    if (from.normalization == Normalization::unnormalized || to.normalization == Normalization::unnormalized)
      factor =
          legendre_normalization(from.normalization, n, m) / legendre_normalization(to.normalization, n, m);
    else
      factor = relative_to_fully(from.normalization, n) / relative_to_fully(to.normalization, n);
  }
  if (from.condon_shortley != to.condon_shortley && (m % 2) == 1) factor = -factor;
  return factor;
}

double zonal_sign(const Convention& convention, int n, int m) {
  return convention.zonal_as_j && m == 0 && n >= 1 ? -1.0 : 1.0;
}

CoefficientSet expressed_in(const CoefficientSet& set, const Convention& target) {
  CoefficientSet out = set;
  for (int n = 0; n <= set.degree; ++n) {
    for (int m = 0; m <= n; ++m) {
      const double factor = coefficient_factor(set.convention, target, n, m);
      out.C(n, m) = set.C(n, m) * zonal_sign(set.convention, n, m) * factor * zonal_sign(target, n, m);
      out.S(n, m) = set.S(n, m) * factor;
      out.sigma_C(n, m) = set.sigma_C(n, m) * std::abs(factor);
      out.sigma_S(n, m) = set.sigma_S(n, m) * std::abs(factor);
    }
  }
  out.convention = target;
  return out;
}

CoefficientSet convert_convention(const CoefficientSet& set, const Convention& target) {
  CoefficientSet out = expressed_in(set, target);
  out.history.push_back("converted from " + describe(set.convention) + " to " + describe(target));
  return out;
}

std::string describe(const Convention& convention) {
  std::string text = describe(convention.normalization);
  text += convention.condon_shortley ? ", Condon-Shortley phase" : ", no Condon-Shortley phase";
  text += convention.zonal_as_j ? ", zonal as J_n = -C_n0" : ", zonal as C_n0";
  return text;
}

std::string short_name(const Convention& convention) {
  std::string text = to_string(convention.normalization);
  if (convention.condon_shortley) text += "+cs";
  if (convention.zonal_as_j) text += "+J";
  return text;
}

std::vector<Convention> all_conventions() {
  std::vector<Convention> out;
  for (const NormalizationName& name : normalization_names())
    for (bool phase : {false, true})
      for (bool zonal : {false, true}) out.push_back(Convention{name.value, phase, zonal});
  return out;
}

bool operator==(const Convention& a, const Convention& b) {
  return a.normalization == b.normalization && a.condon_shortley == b.condon_shortley &&
         a.zonal_as_j == b.zonal_as_j;
}

bool operator!=(const Convention& a, const Convention& b) { return !(a == b); }

}  // namespace polystokes
