#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <limits>

#include "polystokes/render/comparison.h"
#include "polystokes/sets/conventions.h"
#include "render/report_parts.h"
#include "render/svg_plot.h"

namespace polystokes::report_parts {

using svg::escape;

std::string comparison_section(const ReportInput& input) {
  const Comparison c = compare_sets(input.set, *input.other, input.compare_options);
  const CoefficientSet& b = *input.other;
  std::string out = "<section id=\"comparison\">\n<h2>Comparison with a second set</h2>\n";
  out += fmt::format(
      "<p>A: this set (<em>{}</em>, degree {}). B: <em>{}</em> from {} (degree {}, {}). Compared "
      "in A's conventions to degree {}, tolerance {} relative to A's spectrum at each degree (A being the "
      "reference).</p>\n",
      escape(input.set.body), c.degree_a, escape(b.body), escape(input.other_source), c.degree_b,
      escape(describe(b.convention)), c.degree, short_number(c.tolerance));
  out += std::string("<p class=\"verdict ") + (c.agree ? "agree" : "disagree") + "\">" + escape(c.verdict) +
         "</p>\n";
  if (!c.alignment.empty()) {
    out += "<h3>B brought to A</h3>\n<ul>\n";
    for (const auto& step : c.alignment) out += "<li>" + escape(step) + "</li>\n";
    out += "</ul>\n";
  }
  if (c.degree >= 2) {
    std::vector<double> n, rms_a, rms_b, difference, threshold, range;
    for (const auto& d : c.degrees) {
      if (d.degree < 2) continue;
      n.push_back(d.degree);
      rms_a.push_back(d.rms_a);
      rms_b.push_back(d.rms_b);
      difference.push_back(d.rms_difference);
      // The scale compare_sets judged the degree by, so the line crosses A - B exactly where the verdict
      // changes (rounding-level differences aside, which agree regardless).
      threshold.push_back(c.tolerance * d.scale);
    }
    for (const auto* v : {&rms_a, &rms_b, &difference, &threshold})
      range.insert(range.end(), v->begin(), v->end());
    const svg::Axis x{1.5, c.degree + 0.5, false, "degree n", {}};
    const svg::Axis y = svg::axis_for(range, true, "RMS per coefficient (dimensionless)");
    svg::Plot plot(820, 400, x, y);
    const svg::Style style_a{"#1f5fa8", 1.8, false, true, true}, style_b{"#e08a1e", 1.6, true, true, true},
        style_d{"#c0392b", 1.8, false, true, true}, style_t{"#777777", 1.2, true, true, false};
    plot.series(n, rms_a, style_a);
    plot.series(n, rms_b, style_b);
    plot.series(n, difference, style_d);
    plot.series(n, threshold, style_t);
    plot.legend({{"A", style_a},
                 {"B (in A's conventions)", style_b},
                 {"A \u2212 B", style_d},
                 {"agreement threshold", style_t}},
                svg::Plot::Corner::bottom_left);
    const bool identical = std::all_of(difference.begin(), difference.end(), [](double v) { return v == 0; });
    out += "<figure>\n" + plot.svg("difference", "Per-degree difference of the two sets") + "\n<figcaption>";
    out += fmt::format(
        "RMS per coefficient \u221a(\u03a3\u2098 (C\u2099\u2098\u00b2 + S\u2099\u2098\u00b2) / (2n+1)) of A, "
        "of B "
        "and of their difference A \u2212 B, fully normalized, against degree n = 2 to {} (log scale). A "
        "degree "
        "agrees where the difference is below the dashed threshold, {} \u00d7 the scale it is measured "
        "against: the RMS of A at that degree, or {} \u00d7 the largest RMS of A from that degree on where "
        "that is larger (so terms that should vanish are judged against the body's following terms). "
        "Differences up to {} are rounding and always agree.{}",
        c.degree, short_number(c.tolerance), short_number(input.compare_options.relative_floor),
        short_number(input.compare_options.absolute_floor),
        identical ? " The two sets are identical at every degree shown." : "");
    out += "</figcaption>\n</figure>\n";
  }
  if (!c.hypotheses.empty()) {
    out += fmt::format(
        "<h3>Diagnosis</h3>\n<p>Each usual exchange mistake applied to B as read, ranked by the misfit "
        "left (RMS over degrees of the relative difference; {} as given).</p>\n",
        num(fmt::format("{:.3e}", c.misfit)));
    // The five best in view, the rest folded away.
    const std::string header =
        "<table class=\"grid\">\n<tr><th>hypothesis</th><th>what it says</th><th>misfit</th>"
        "<th>reduced by</th><th>agrees to degree</th><th>explains all</th></tr>\n";
    out += header;
    for (size_t i = 0; i < c.hypotheses.size(); ++i) {
      const Hypothesis& h = c.hypotheses[i];
      if (i == 5)
        out += fmt::format("</table>\n<details>\n<summary>{} more hypotheses</summary>\n{}",
                           c.hypotheses.size() - 5, header);
      out += fmt::format(
          "<tr{}><td>{}</td><td>{}</td><td class=\"num\">{:.3e}</td><td class=\"num\">{}</td>"
          "<td class=\"num\">{}</td><td>{}</td></tr>\n",
          h.explains ? " class=\"best\"" : "", escape(h.kind()), escape(h.description), h.misfit,
          h.misfit > 0 ? fmt::format("\u00d7{:.3g}", c.misfit / h.misfit) : std::string("all"),
          h.agree_degree, h.explains ? "yes" : "no");
    }
    out += c.hypotheses.size() > 5 ? "</table>\n</details>\n" : "</table>\n";
  }
  if (!c.largest.empty()) {
    out +=
        "<h3>Largest differences</h3>\n<table class=\"grid\">\n<tr><th>coefficient</th><th>A</th>"
        "<th>B (in A's conventions)</th><th>A \u2212 B</th></tr>\n";
    for (const auto& d : c.largest)
      out += fmt::format(
          "<tr><td>{}<sub>{},{}</sub></td><td class=\"num\">{}</td><td class=\"num\">{}</td>"
          "<td class=\"num\">{}</td></tr>\n",
          d.sine ? "S" : "C", d.n, d.m, sci(d.a), sci(d.b), sci(d.a - d.b));
    out += "</table>\n";
  }
  out += "<details>\n<summary>Comparison, full text</summary>\n<pre>" + escape(comparison_text(c)) +
         "</pre>\n</details>\n";
  return out + "</section>\n";
}

}  // namespace polystokes::report_parts
