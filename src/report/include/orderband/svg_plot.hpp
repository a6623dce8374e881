// Small SVG charts for reports: lines, markers, bars, shaded bands, axes with ticks.
#pragma once

#include <iosfwd>
#include <string>
#include <vector>

namespace orderband {

class SvgPlot {
 public:
  SvgPlot(int width, int height, std::string title, std::string x_label, std::string y_label);
  void line(const std::vector<double>& x, const std::vector<double>& y, const std::string& colour,
            const std::string& label, bool dashed = false);
  void markers(const std::vector<double>& x, const std::vector<double>& y, const std::string& colour,
               const std::string& label);
  /// Vertical error bars from y_low to y_high at x.
  void error_bars(const std::vector<double>& x, const std::vector<double>& y_low, const std::vector<double>& y_high,
                  const std::string& colour);
  /// Bars of a histogram or bar chart: left edges, widths, heights.
  void bars(const std::vector<double>& left, const std::vector<double>& width, const std::vector<double>& height,
            const std::string& colour, const std::string& label);
  void vertical_band(double x0, double x1, const std::string& colour, double opacity, const std::string& label = "");
  void vertical_line(double x, const std::string& colour, const std::string& label = "");
  void x_range(double lo, double hi);
  void y_range(double lo, double hi);
  /// Category names under the x axis at positions 0, 1, 2, …
  void x_categories(const std::vector<std::string>& names);
  std::string render() const;

 private:
  struct Item {
    std::string svg_kind;
    std::vector<double> x, y, y2, w;
    std::string colour, label;
    bool dashed = false;
    double opacity = 1;
  };
  struct Frame;  ///< the data range and the plotting box (svg_plot.cpp)
  Frame frame() const;
  void write_axes(std::ostream& s, const Frame& f) const;
  static void write_item(std::ostream& s, const Item& it, const Frame& f);
  void write_legend(std::ostream& s, const Frame& f) const;
  int width_, height_;
  std::string title_, x_label_, y_label_;
  std::vector<Item> items_;
  std::vector<std::string> categories_;
  bool x_fixed_ = false, y_fixed_ = false;
  double x0_ = 0, x1_ = 1, y0_ = 0, y1_ = 1;
};

/// Several rendered charts placed on a grid in one SVG document (nested svg elements).
std::string svg_grid(const std::vector<std::string>& charts, int columns, int cell_width, int cell_height);

/// Escapes text for XML/HTML.
std::string xml_escape(const std::string& text);

}  // namespace orderband
