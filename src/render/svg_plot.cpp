#include "render/svg_plot.h"

#include <fmt/format.h>

#include <algorithm>
#include <array>
#include <cmath>
#include <limits>

namespace polystokes::svg {

namespace {

// Step of 1, 2 or 5 times a power of ten closest to `raw` (common practice for axis ticks).
double nice_step(double raw) {
  if (!(raw > 0) || !std::isfinite(raw)) return 1;
  const double power = std::pow(10.0, std::floor(std::log10(raw)));
  const double f = raw / power;
  const double mantissa = f < 1.5 ? 1 : f < 3.5 ? 2 : f < 7.5 ? 5 : 10;
  return mantissa * power;
}

bool is_power_of_ten(double value) {
  const double exponent = std::log10(value);
  return std::abs(exponent - std::round(exponent)) < 1e-9;
}

// Tick text as SVG content: powers of ten on log axes as 10 with a raised exponent.
std::string tick_markup(double value, bool log) {
  if (log && is_power_of_ten(value)) {
    const int exponent = int(std::lround(std::log10(value)));
    if (exponent >= -2 && exponent <= 3) return tick_label(value);
    return fmt::format("10<tspan dy=\"-6\" font-size=\"9\">{}</tspan>",
                       exponent < 0 ? "\u2212" + std::to_string(-exponent) : std::to_string(exponent));
  }
  return escape(tick_label(value));
}

std::string stroke_attributes(const Style& style) {
  return fmt::format("stroke=\"{}\" stroke-width=\"{}\"{}", style.color, style.width,
                     style.dashed ? " stroke-dasharray=\"6 4\"" : "");
}

// viridis at t = 0, 1/8, ..., 1 (van der Walt and Smith 2015; values from memory).
constexpr std::array<std::array<int, 3>, 9> kViridis{{{0x44, 0x01, 0x54},
                                                      {0x47, 0x2d, 0x7b},
                                                      {0x3b, 0x52, 0x8b},
                                                      {0x2c, 0x72, 0x8e},
                                                      {0x21, 0x91, 0x8c},
                                                      {0x28, 0xae, 0x80},
                                                      {0x5e, 0xc9, 0x62},
                                                      {0xad, 0xdc, 0x30},
                                                      {0xfd, 0xe7, 0x25}}};

}  // namespace

std::string escape(const std::string& text) {
  std::string out;
  out.reserve(text.size());
  const auto byte = [&](size_t i) { return static_cast<unsigned char>(text[i]); };
  size_t i = 0;
  while (i < text.size()) {
    const unsigned char c = byte(i);
    if (c < 0x80) {
      switch (c) {
        case '&':
          out += "&amp;";
          break;
        case '<':
          out += "&lt;";
          break;
        case '>':
          out += "&gt;";
          break;
        case '"':
          out += "&quot;";
          break;
        case '\'':
          out += "&#39;";
          break;
        default:
          if ((c < 0x20 && c != '\t' && c != '\n') || c == 0x7f)
            out += fmt::format("\\x{:02x}", c);
          else
            out += char(c);
      }
      ++i;
      continue;
    }
    // Length and smallest code point of the sequence a lead byte starts (RFC 3629: no overlong forms,
    // no surrogates, nothing above U+10FFFF).
    const size_t length = c >= 0xc2 && c <= 0xdf   ? 2
                          : c >= 0xe0 && c <= 0xef ? 3
                          : c >= 0xf0 && c <= 0xf4 ? 4
                                                   : 0;
    unsigned long code = length == 2 ? c & 0x1f : length == 3 ? c & 0x0f : c & 0x07;
    bool valid = length > 0 && i + length <= text.size();
    for (size_t k = 1; valid && k < length; ++k) {
      valid = (byte(i + k) & 0xc0) == 0x80;
      code = (code << 6) | (byte(i + k) & 0x3f);
    }
    valid = valid && !(length == 3 && code < 0x800) &&
            !(length == 4 && (code < 0x10000 || code > 0x10ffff)) && !(code >= 0xd800 && code <= 0xdfff) &&
            code != 0xfffe && code != 0xffff;
    if (valid) {
      out.append(text, i, length);
      i += length;
    } else {
      out += fmt::format("\\x{:02x}", c);
      ++i;
    }
  }
  return out;
}

std::string tick_label(double value) {
  if (value == 0) return "0";
  const double magnitude = std::abs(value);
  if (magnitude < 1e-3 || magnitude >= 1e5) {
    std::string mantissa = fmt::format("{:.5e}", value);
    const size_t e = mantissa.find('e');
    std::string exponent = mantissa.substr(e + 1);
    mantissa.resize(e);
    while (mantissa.back() == '0') mantissa.pop_back();
    if (mantissa.back() == '.') mantissa.pop_back();
    const bool negative = exponent[0] == '-';
    exponent.erase(0, 1);
    exponent.erase(0, std::min(exponent.find_first_not_of('0'), exponent.size() - 1));
    return mantissa + "e" + (negative ? "-" : "") + exponent;
  }
  return fmt::format("{:.6g}", value);
}

Axis axis_for(const std::vector<double>& values, bool log, const std::string& label) {
  double low = std::numeric_limits<double>::infinity();
  double high = -low;
  for (double v : values) {
    if (!std::isfinite(v) || (log && v <= 0)) continue;
    low = std::min(low, v);
    high = std::max(high, v);
  }
  Axis axis;
  axis.log = log;
  axis.label = label;
  if (log) {
    if (!(low <= high)) low = high = 1;
    axis.min = std::pow(10.0, std::floor(std::log10(low) + 1e-12));
    axis.max = std::pow(10.0, std::ceil(std::log10(high) - 1e-12));
    if (!(axis.max > axis.min)) axis.max = axis.min * 10;
    return axis;
  }
  if (!(low <= high)) low = high = 0;
  if (low == high) {
    low -= 0.5;
    high += 0.5;
  }
  const double step = nice_step((high - low) / 5);
  axis.min = std::floor(low / step + 1e-9) * step;
  axis.max = std::ceil(high / step - 1e-9) * step;
  // The products may round just inside the data.
  axis.min = std::min(axis.min, low);
  axis.max = std::max(axis.max, high);
  return axis;
}

std::vector<double> ticks(const Axis& axis, int target) {
  if (!axis.fixed_ticks.empty()) return axis.fixed_ticks;
  std::vector<double> out;
  if (axis.log) {
    const double lo = std::log10(axis.min);
    const double hi = std::log10(axis.max);
    const int first = int(std::ceil(lo - 1e-9));
    const int last = int(std::floor(hi + 1e-9));
    const int every = std::max(1, int(std::ceil((last - first + 1) / 8.0)));
    for (int e = first; e <= last; e += every) out.push_back(std::pow(10.0, e));
    if (hi - lo < 2) {
      for (int e = first - 1; e <= last; ++e)
        for (double f : {2.0, 5.0}) {
          const double v = f * std::pow(10.0, e);
          if (v >= axis.min * (1 - 1e-9) && v <= axis.max * (1 + 1e-9)) out.push_back(v);
        }
      std::sort(out.begin(), out.end());
    }
    if (out.empty()) out = {axis.min, axis.max};
    return out;
  }
  const double step = nice_step((axis.max - axis.min) / std::max(1, target - 1));
  for (double k = std::ceil(axis.min / step - 1e-9); k * step <= axis.max + 1e-9 * step; k += 1) {
    const double v = k * step;
    out.push_back(std::abs(v) < 1e-9 * step ? 0.0 : v);
  }
  return out;
}

Plot::Plot(double width, double height, const Axis& x, const Axis& y, const Margins& margins)
    : width_(width), height_(height), x_(x), y_(y), margins_(margins) {}

double Plot::fraction(const Axis& axis, double value) const {
  if (axis.log)
    return (std::log10(value) - std::log10(axis.min)) / (std::log10(axis.max) - std::log10(axis.min));
  return (value - axis.min) / (axis.max - axis.min);
}

double Plot::to_x(double x) const { return left() + fraction(x_, x) * (right() - left()); }
double Plot::to_y(double y) const { return bottom() - fraction(y_, y) * (bottom() - top()); }

void Plot::series(const std::vector<double>& x, const std::vector<double>& y, const Style& style) {
  const auto usable = [&](double a, double b) {
    return std::isfinite(a) && std::isfinite(b) && (!x_.log || a > 0) && (!y_.log || b > 0);
  };
  std::string path, marks;
  bool pen_down = false;
  for (size_t i = 0; i < std::min(x.size(), y.size()); ++i) {
    if (!usable(x[i], y[i])) {
      pen_down = false;
      continue;
    }
    const double px = to_x(x[i]);
    const double py = to_y(y[i]);
    path += fmt::format("{}{:.1f} {:.1f}", pen_down ? " L" : (path.empty() ? "M" : " M"), px, py);
    pen_down = true;
    if (style.markers)
      marks += fmt::format("<circle cx=\"{:.1f}\" cy=\"{:.1f}\" r=\"{}\" fill=\"{}\"/>", px, py,
                           std::max(2.0, style.width + 1.2), style.color);
  }
  if (style.line && !path.empty())
    content_ += fmt::format("<path d=\"{}\" fill=\"none\" {} stroke-linejoin=\"round\"/>\n", path,
                            stroke_attributes(style));
  if (!marks.empty()) content_ += "<g>" + marks + "</g>\n";
}

void Plot::rect(double x0, double y0, double x1, double y1, const std::string& color) {
  const double a = to_x(x0), b = to_x(x1), c = to_y(y0), d = to_y(y1);
  // Rounded outward by a hair so neighbouring cells leave no anti-aliasing seams.
  content_ +=
      fmt::format("<rect x=\"{:.2f}\" y=\"{:.2f}\" width=\"{:.2f}\" height=\"{:.2f}\" fill=\"{}\"/>",
                  std::min(a, b), std::min(c, d), std::abs(b - a) + 0.35, std::abs(d - c) + 0.35, color);
}

void Plot::label(double x, double y, const std::string& text, const std::string& color) {
  content_ += fmt::format("<text x=\"{:.1f}\" y=\"{:.1f}\" fill=\"{}\">{}</text>\n", to_x(x), to_y(y), color,
                          escape(text));
}

void Plot::legend(const std::vector<LegendEntry>& entries, Corner corner) {
  if (entries.empty()) return;
  size_t longest = 0;  // in code points: UTF-8 continuation bytes do not count
  for (const auto& e : entries)
    longest = std::max(longest, size_t(std::count_if(e.label.begin(), e.label.end(), [](char c) {
                         return (static_cast<unsigned char>(c) & 0xc0) != 0x80;
                       })));
  const double box_w = 44 + 6.4 * double(longest);
  const double line_h = 17;
  const double box_h = 8 + line_h * double(entries.size());
  const bool on_right = corner == Corner::top_right || corner == Corner::bottom_right;
  const bool on_top = corner == Corner::top_right || corner == Corner::top_left;
  const double x0 = on_right ? right() - box_w - 8 : left() + 8;
  const double y0 = on_top ? top() + 8 : bottom() - box_h - 8;
  legend_ += fmt::format(
      "<g><rect x=\"{:.1f}\" y=\"{:.1f}\" width=\"{:.1f}\" height=\"{:.1f}\" fill=\"#ffffff\" "
      "fill-opacity=\"0.9\" "
      "stroke=\"#bbbbbb\"/>\n",
      x0, y0, box_w, box_h);
  for (size_t i = 0; i < entries.size(); ++i) {
    const double y = y0 + 4 + line_h * (double(i) + 0.5);
    const Style& s = entries[i].style;
    if (s.line)
      legend_ += fmt::format("<line x1=\"{:.1f}\" y1=\"{:.1f}\" x2=\"{:.1f}\" y2=\"{:.1f}\" {}/>", x0 + 6, y,
                             x0 + 30, y, stroke_attributes(s));
    if (s.markers)
      legend_ +=
          fmt::format("<circle cx=\"{:.1f}\" cy=\"{:.1f}\" r=\"3\" fill=\"{}\"/>", x0 + 18, y, s.color);
    legend_ += fmt::format("<text x=\"{:.1f}\" y=\"{:.1f}\" dominant-baseline=\"middle\">{}</text>\n",
                           x0 + 36, y + 1, escape(entries[i].label));
  }
  legend_ += "</g>\n";
}

void Plot::raw(const std::string& markup) { content_ += markup; }
void Plot::overlay(const std::string& markup) { overlay_ += markup; }

std::string Plot::svg(const std::string& id, const std::string& title) const {
  const double w = right() - left();
  const double h = bottom() - top();
  std::string out = fmt::format(
      "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"{0}\" height=\"{1}\" viewBox=\"0 0 {0} {1}\" "
      "font-family=\"sans-serif\" font-size=\"12\" role=\"img\">\n<title>{2}</title>\n"
      "<defs><clipPath id=\"{3}-clip\"><rect x=\"{4}\" y=\"{5}\" width=\"{6}\" "
      "height=\"{7}\"/></clipPath></defs>\n"
      "<rect x=\"{4}\" y=\"{5}\" width=\"{6}\" height=\"{7}\" fill=\"#ffffff\"/>\n",
      width_, height_, escape(title), id, left(), top(), w, h);
  std::string grid, marks;
  for (double t : ticks(x_)) {
    const double px = to_x(t);
    grid += fmt::format("<line x1=\"{0:.1f}\" y1=\"{1}\" x2=\"{0:.1f}\" y2=\"{2}\"/>", px, top(), bottom());
    marks += fmt::format("<line x1=\"{0:.1f}\" y1=\"{1}\" x2=\"{0:.1f}\" y2=\"{2}\" stroke=\"#333\"/>", px,
                         bottom(), bottom() + 5);
    marks += fmt::format("<text x=\"{:.1f}\" y=\"{}\" text-anchor=\"middle\">{}</text>\n", px, bottom() + 18,
                         tick_markup(t, x_.log));
  }
  for (double t : ticks(y_)) {
    const double py = to_y(t);
    grid += fmt::format("<line x1=\"{1}\" y1=\"{0:.1f}\" x2=\"{2}\" y2=\"{0:.1f}\"/>", py, left(), right());
    marks += fmt::format("<line x1=\"{1}\" y1=\"{0:.1f}\" x2=\"{2}\" y2=\"{0:.1f}\" stroke=\"#333\"/>", py,
                         left() - 5, left());
    marks += fmt::format(
        "<text x=\"{}\" y=\"{:.1f}\" text-anchor=\"end\" dominant-baseline=\"middle\">{}</text>\n",
        left() - 8, py, tick_markup(t, y_.log));
  }
  out += "<g stroke=\"#e3e3e3\" stroke-width=\"1\">" + grid + "</g>\n";
  out += fmt::format("<g clip-path=\"url(#{}-clip)\">\n{}</g>\n", id, content_);
  out += fmt::format("<rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\" fill=\"none\" stroke=\"#333\"/>\n",
                     left(), top(), w, h);
  out += marks;
  out += fmt::format("<text x=\"{:.1f}\" y=\"{:.1f}\" text-anchor=\"middle\">{}</text>\n", left() + w / 2,
                     height_ - 8, escape(x_.label));
  out +=
      fmt::format("<text transform=\"translate(16 {:.1f}) rotate(-90)\" text-anchor=\"middle\">{}</text>\n",
                  top() + h / 2, escape(y_.label));
  out += legend_ + overlay_ + "</svg>";
  return out;
}

std::string sequential_color(double t) {
  if (!std::isfinite(t)) t = 0;
  t = std::clamp(t, 0.0, 1.0) * double(kViridis.size() - 1);
  const size_t i = std::min(size_t(t), kViridis.size() - 2);
  const double f = t - double(i);
  std::array<int, 3> rgb{};
  for (int k = 0; k < 3; ++k)
    rgb[size_t(k)] = int(std::lround(kViridis[i][size_t(k)] * (1 - f) + kViridis[i + 1][size_t(k)] * f));
  return fmt::format("#{:02x}{:02x}{:02x}", rgb[0], rgb[1], rgb[2]);
}

std::string color_bar(double x, double y, double height, double min, double max, const std::string& label,
                      const std::string& id) {
  const double width = 16;
  std::string out = fmt::format("<defs><linearGradient id=\"{}\" x1=\"0\" y1=\"1\" x2=\"0\" y2=\"0\">", id);
  for (size_t i = 0; i < kViridis.size(); ++i) {
    const double t = double(i) / double(kViridis.size() - 1);
    out += fmt::format("<stop offset=\"{}\" stop-color=\"{}\"/>", t, sequential_color(t));
  }
  out += "</linearGradient></defs>\n";
  out +=
      fmt::format("<rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\" fill=\"url(#{})\" stroke=\"#333\"/>\n",
                  x, y, width, height, id);
  Axis axis{min, max, false, label, {}};
  if (!(max > min)) axis.max = min + 1;
  double widest = 0;
  for (double t : ticks(axis, 6)) {
    const double py = y + height * (1 - (t - axis.min) / (axis.max - axis.min));
    if (py < y - 0.5 || py > y + height + 0.5) continue;
    const std::string text = tick_label(t);
    widest = std::max(widest, 6.6 * double(text.size()));
    out += fmt::format("<line x1=\"{0}\" y1=\"{1:.1f}\" x2=\"{2}\" y2=\"{1:.1f}\" stroke=\"#333\"/>",
                       x + width, py, x + width + 4);
    out += fmt::format("<text x=\"{}\" y=\"{:.1f}\" dominant-baseline=\"middle\">{}</text>\n", x + width + 7,
                       py, escape(text));
  }
  out += fmt::format(
      "<text transform=\"translate({:.1f} {:.1f}) rotate(-90)\" text-anchor=\"middle\">{}</text>\n",
      x + width + 16 + widest, y + height / 2, escape(label));
  return out;
}

std::vector<std::vector<Eigen::Vector2d>> contour_loops(const Grid& grid, double level) {
  // Padded point grid: one ring of points below the level around the data.
  const long W = grid.columns + 2;
  const long H = grid.rows + 2;
  const auto padded = [&](long pc, long pr) { return pc == 0 || pr == 0 || pc == W - 1 || pr == H - 1; };
  const auto value = [&](long pc, long pr) {
    return double(grid.values[size_t((pr - 1) * grid.columns + (pc - 1))]);
  };
  const auto inside = [&](long pc, long pr) { return !padded(pc, pr) && value(pc, pr) > level; };
  // Edge ids: 2 (pr W + pc) for the edge to (pc+1, pr), +1 for the edge to (pc, pr+1).
  const auto crossing = [&](long edge) {
    const long base = edge / 2;
    const long pc = base % W, pr = base / W;
    const long qc = pc + (edge % 2 == 0 ? 1 : 0), qr = pr + (edge % 2 == 0 ? 0 : 1);
    double t = 0.5;
    if (!padded(pc, pr) && !padded(qc, qr)) {
      const double a = value(pc, pr), b = value(qc, qr);
      if (a != b) t = std::clamp((level - a) / (b - a), 0.0, 1.0);
    }
    return Eigen::Vector2d(double(pc) + t * double(qc - pc) - 1.0, double(pr) + t * double(qr - pr) - 1.0);
  };
  std::vector<std::array<long, 2>> segments;
  std::vector<std::array<int, 2>> at_edge(size_t(2 * W * H), {-1, -1});
  const auto add = [&](long e0, long e1) {
    const int s = int(segments.size());
    segments.push_back({e0, e1});
    for (long e : {e0, e1}) {
      auto& slot = at_edge[size_t(e)];
      (slot[0] < 0 ? slot[0] : slot[1]) = s;
    }
  };
  for (long pr = 0; pr + 1 < H; ++pr) {
    for (long pc = 0; pc + 1 < W; ++pc) {
      const bool a = inside(pc, pr), b = inside(pc + 1, pr), d = inside(pc + 1, pr + 1),
                 e = inside(pc, pr + 1);
      const long top = 2 * (pr * W + pc), left = top + 1;
      const long bottom = 2 * ((pr + 1) * W + pc), right = 2 * (pr * W + pc + 1) + 1;
      std::vector<long> cut;
      if (a != b) cut.push_back(top);
      if (b != d) cut.push_back(right);
      if (e != d) cut.push_back(bottom);
      if (a != e) cut.push_back(left);
      if (cut.size() == 2) {
        add(cut[0], cut[1]);
      } else if (cut.size() == 4) {
        const bool center =
            !padded(pc, pr) && !padded(pc + 1, pr + 1) && !padded(pc + 1, pr) && !padded(pc, pr + 1) &&
            (value(pc, pr) + value(pc + 1, pr) + value(pc + 1, pr + 1) + value(pc, pr + 1)) / 4 > level;
        if (a == center) {  // corners b and e are cut off
          add(top, right);
          add(bottom, left);
        } else {  // corners a and d are cut off
          add(top, left);
          add(right, bottom);
        }
      }
    }
  }
  std::vector<std::vector<Eigen::Vector2d>> loops;
  std::vector<bool> used(segments.size(), false);
  for (size_t start = 0; start < segments.size(); ++start) {
    if (used[start]) continue;
    std::vector<Eigen::Vector2d> loop;
    const long first_edge = segments[start][0];
    long edge = segments[start][1];
    size_t s = start;
    used[s] = true;
    loop.push_back(crossing(first_edge));
    while (edge != first_edge) {
      loop.push_back(crossing(edge));
      const auto& slot = at_edge[size_t(edge)];
      const int next = slot[0] == int(s) ? slot[1] : slot[0];
      if (next < 0 || used[size_t(next)]) break;
      s = size_t(next);
      used[s] = true;
      edge = segments[s][0] == edge ? segments[s][1] : segments[s][0];
    }
    loops.push_back(std::move(loop));
  }
  return loops;
}

std::string loops_path(const std::vector<std::vector<Eigen::Vector2d>>& loops, const Eigen::Vector2d& origin,
                       const Eigen::Vector2d& scale) {
  std::string out;
  for (const auto& loop : loops) {
    if (loop.size() < 3) continue;
    std::vector<Eigen::Vector2d> p;
    p.reserve(loop.size());
    for (const auto& q : loop) p.push_back(origin + scale.cwiseProduct(q));
    const size_t n = p.size();
    std::string part;
    size_t kept = 0;
    for (size_t i = 0; i < n; ++i) {
      const Eigen::Vector2d u = p[i] - p[(i + n - 1) % n];
      const Eigen::Vector2d v = p[(i + 1) % n] - p[i];
      const double cross = u.x() * v.y() - u.y() * v.x();
      if (std::abs(cross) <= 1e-9 * u.norm() * v.norm() && u.dot(v) > 0) continue;  // inside a straight run
      part += fmt::format("{}{:.1f} {:.1f}", kept == 0 ? "M" : " L", p[i].x(), p[i].y());
      ++kept;
    }
    if (kept >= 3) out += part + " Z ";
  }
  if (!out.empty()) out.pop_back();
  return out;
}

std::string cell_runs(int cells_x, int cells_y, double x0, double y0, double cell_px,
                      const std::function<std::string(int, int)>& colour) {
  std::string out;
  for (int cj = 0; cj < cells_y; ++cj) {
    int start = 0;
    std::string run = colour(0, cj);
    for (int ci = 1; ci <= cells_x; ++ci) {
      std::string next = ci < cells_x ? colour(ci, cj) : std::string();
      if (ci < cells_x && next == run) continue;
      if (!run.empty())
        out += fmt::format("<rect x=\"{:.1f}\" y=\"{:.1f}\" width=\"{:.1f}\" height=\"{:.1f}\" fill=\"{}\"/>",
                           x0 + start * cell_px, y0 + cj * cell_px, (ci - start) * cell_px + 0.4,
                           cell_px + 0.4, run);
      start = ci;
      run = std::move(next);
    }
  }
  return out;
}

}  // namespace polystokes::svg
