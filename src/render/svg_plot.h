// Small SVG building blocks for the HTML report: plot frames with linear or logarithmic axes, ticks, lines,
// markers, legends, colour bars, a sequential colour map and filled outlines of raster masks.
#pragma once

#include <Eigen/Core>
#include <functional>
#include <string>
#include <vector>

namespace polystokes::svg {

/// Text safe inside XML elements and attributes: &, <, >, " and ' become entities; bytes that are not part of
/// well-formed UTF-8, control characters other than tab and newline, and U+FFFE/U+FFFF (none allowed in
/// XML 1.0) are shown as the text \xNN.
std::string escape(const std::string& text);

/// Compact tick label: 6 significant digits at most, trailing zeros dropped, exponent form (1e-06) for
/// magnitudes below 1e-3 or from 1e5 on, "0" for zero.
std::string tick_label(double value);

/// One plot axis. Log axes need 0 < min < max.
struct Axis {
  double min = 0;
  double max = 1;
  bool log = false;
  std::string label;                ///< quantity with unit, e.g. "degree n" or "radial acceleration (m s^-2)"
  std::vector<double> fixed_ticks;  ///< when non-empty, used instead of the automatic ticks
};

/// Axis spanning the finite values (log: the positive ones). Linear: widened to multiples of a 1-2-5 tick
/// step. Log: widened to whole decades. A single value or no value gives a unit-wide (one-decade) range.
Axis axis_for(const std::vector<double>& values, bool log, const std::string& label);

/// axis.fixed_ticks if given, else tick positions inside [min, max]: 1-2-5 steps giving about `target` ticks
/// on a linear axis; on a log axis powers of ten, thinned to at most ~8 labels, with 2 and 5 added when the
/// range is under two decades.
std::vector<double> ticks(const Axis& axis, int target = 6);

/// Stroke and marker style of a data series.
struct Style {
  std::string color = "#1f5fa8";  ///< any SVG colour
  double width = 1.6;             ///< stroke width, px
  bool dashed = false;
  bool line = true;      ///< draw the connecting line
  bool markers = false;  ///< circle at each point
};

struct LegendEntry {
  std::string label;
  Style style;
};

/// Space around the plotting area, px.
struct Margins {
  double left = 78;
  double right = 24;
  double top = 16;
  double bottom = 48;
};

/// A plot: a frame with grid, ticks and axis labels around data drawn in data coordinates.
/// Add content, then call svg(). Points outside the axes are clipped to the frame.
class Plot {
 public:
  Plot(double width, double height, const Axis& x, const Axis& y, const Margins& margins = {});

  /// SVG pixel coordinates of a data value (log axes: value must be > 0).
  double to_x(double x) const;
  double to_y(double y) const;

  /// Polyline through the points; non-finite points (and non-positive values on log axes) break the line.
  void series(const std::vector<double>& x, const std::vector<double>& y, const Style& style);
  /// Filled rectangle between two data corners (no stroke).
  void rect(double x0, double y0, double x1, double y1, const std::string& color);
  /// Text anchored at a data point (escaped).
  void label(double x, double y, const std::string& text, const std::string& color = "#222");
  enum class Corner { top_right, top_left, bottom_right, bottom_left };
  /// Legend box in a corner of the frame.
  void legend(const std::vector<LegendEntry>& entries, Corner corner = Corner::top_right);
  /// Raw SVG markup drawn inside the frame's clip region, in pixel coordinates (for callers' own shapes).
  void raw(const std::string& markup);
  /// Raw SVG markup drawn above everything, unclipped (e.g. a colour bar in the right margin).
  void overlay(const std::string& markup);

  double width() const { return width_; }
  double height() const { return height_; }
  double left() const { return margins_.left; }
  double top() const { return margins_.top; }
  double right() const { return width_ - margins_.right; }
  double bottom() const { return height_ - margins_.bottom; }

  /// The complete <svg> element. `id` must be unique in the document (it names the clip path);
  /// `title` becomes the SVG <title> (escaped).
  std::string svg(const std::string& id, const std::string& title) const;

 private:
  double fraction(const Axis& axis, double value) const;
  double width_, height_;
  Axis x_, y_;
  Margins margins_;
  std::string content_, legend_, overlay_;
};

/// "#rrggbb" for t in [0, 1] (clamped) on a sequential, perceptually ordered dark-blue to yellow map,
/// interpolated linearly in RGB between nine control points of the viridis map (van der Walt and Smith
/// 2015, matplotlib; control values from memory).
std::string sequential_color(double t);

/// Vertical colour bar at (x, y) px, `height` tall, spanning [min, max] of `sequential_color` with ticks and
/// a rotated label to its right. `id` must be unique in the document (names its gradient).
std::string color_bar(double x, double y, double height, double min, double max, const std::string& label,
                      const std::string& id);

/// Rectangles filling a raster of cells_x by cells_y square cells of `cell_px` px whose top left corner is at
/// (x0, y0) px: colour(ci, cj) gives each cell's fill ("#rrggbb"; empty = none), and runs of equal colour
/// along a row become one rectangle, which keeps maps of large meshes small. Cells overlap by 0.4 px so no
/// seams show. O(cells).
std::string cell_runs(int cells_x, int cells_y, double x0, double y0, double cell_px,
                      const std::function<std::string(int, int)>& colour);

/// Values on a grid of points, row-major: value at (col, row) = values[row * columns + col].
struct Grid {
  int columns = 0;
  int rows = 0;
  std::vector<float> values;
};

/// Closed loops of the `level` contour of the grid (marching squares with linear interpolation along cell
/// edges; saddles resolved by the cell-centre average). The grid is treated as surrounded by values below
/// `level`, so every loop closes. Coordinates are (column, row) in grid units. O(columns * rows).
std::vector<std::vector<Eigen::Vector2d>> contour_loops(const Grid& grid, double level);

/// SVG path data ("M x y L ... Z" per loop) of the loops mapped by p -> origin + scale * p, with points
/// that lie on a straight run dropped; coordinates rounded to 0.1 px. Fill with fill-rule="evenodd".
std::string loops_path(const std::vector<std::vector<Eigen::Vector2d>>& loops, const Eigen::Vector2d& origin,
                       const Eigen::Vector2d& scale);

}  // namespace polystokes::svg
