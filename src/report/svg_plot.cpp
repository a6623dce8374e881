// SVG charts.
#include "orderband/svg_plot.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <limits>
#include <sstream>

#include "orderband/html_page.hpp"
#include "orderband/input_hash.hpp"

namespace orderband {

std::string xml_escape(const std::string& t) {
  std::string out;
  for (char c : t) {
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
      default:
        out += c;
    }
  }
  return out;
}

SvgPlot::SvgPlot(int width, int height, std::string title, std::string x_label, std::string y_label)
    : width_(width),
      height_(height),
      title_(std::move(title)),
      x_label_(std::move(x_label)),
      y_label_(std::move(y_label)) {}

void SvgPlot::line(const std::vector<double>& x, const std::vector<double>& y, const std::string& c,
                   const std::string& l, bool dashed) {
  items_.push_back({"line", x, y, {}, {}, c, l, dashed, 1});
}
void SvgPlot::markers(const std::vector<double>& x, const std::vector<double>& y, const std::string& c,
                      const std::string& l) {
  items_.push_back({"markers", x, y, {}, {}, c, l, false, 1});
}
void SvgPlot::error_bars(const std::vector<double>& x, const std::vector<double>& lo, const std::vector<double>& hi,
                         const std::string& c) {
  items_.push_back({"errors", x, lo, hi, {}, c, "", false, 1});
}
void SvgPlot::bars(const std::vector<double>& left, const std::vector<double>& width, const std::vector<double>& h,
                   const std::string& c, const std::string& l) {
  items_.push_back({"bars", left, h, {}, width, c, l, false, 0.85});
}
void SvgPlot::vertical_band(double x0, double x1, const std::string& c, double opacity, const std::string& l) {
  items_.push_back({"vband", {x0, x1}, {}, {}, {}, c, l, false, opacity});
}
void SvgPlot::vertical_line(double x, const std::string& c, const std::string& l) {
  items_.push_back({"vline", {x}, {}, {}, {}, c, l, true, 1});
}
void SvgPlot::x_range(double lo, double hi) { x_fixed_ = true, x0_ = lo, x1_ = hi; }
void SvgPlot::y_range(double lo, double hi) { y_fixed_ = true, y0_ = lo, y1_ = hi; }
void SvgPlot::x_categories(const std::vector<std::string>& names) { categories_ = names; }

namespace {
std::vector<double> ticks(double lo, double hi, int target = 6) {
  const double span = hi - lo;
  if (!(span > 0)) return {lo};
  const double raw = span / target, mag = std::pow(10.0, std::floor(std::log10(raw)));
  double step = mag;
  for (double f : {1.0, 2.0, 5.0, 10.0})
    if (f * mag >= raw) {
      step = f * mag;
      break;
    }
  std::vector<double> t;
  for (double v = std::ceil(lo / step) * step; v <= hi + 1e-9 * span; v += step)
    t.push_back(std::abs(v) < 1e-12 * step ? 0 : v);
  return t;
}
}  // namespace

/// The data range (fixed, or from the items with a margin) and the plotting box in pixels.
struct SvgPlot::Frame {
  double x0, x1, y0, y1;
  double left = 70, right = 20, top = 34, bottom = 52;
  double pw = 0, ph = 0;  ///< plotting box width and height
  double X(double v) const { return left + (v - x0) / (x1 - x0) * pw; }
  double Y(double v) const { return top + (1 - (v - y0) / (y1 - y0)) * ph; }
};

SvgPlot::Frame SvgPlot::frame() const {
  Frame f{x0_, x1_, y0_, y1_};
  f.pw = width_ - f.left - f.right, f.ph = height_ - f.top - f.bottom;
  if (x_fixed_ && y_fixed_) return f;
  double ax = std::numeric_limits<double>::infinity(), bx = -ax, ay = ax, by = -ax;
  for (const Item& it : items_) {
    for (size_t k = 0; k < it.x.size(); ++k) {
      if (!std::isfinite(it.x[k])) continue;
      ax = std::min(ax, it.x[k]);
      bx = std::max(bx, it.x[k] + (it.w.size() > k ? it.w[k] : 0));
    }
    for (const auto* v : {&it.y, &it.y2})
      for (double y : *v)
        if (std::isfinite(y)) ay = std::min(ay, y), by = std::max(by, y);
    if (it.svg_kind == "bars") ay = std::min(ay, 0.0);
  }
  if (!x_fixed_) {
    f.x0 = std::isfinite(ax) ? ax : 0, f.x1 = std::isfinite(bx) && bx > ax ? bx : f.x0 + 1;
    const double pad = 0.04 * (f.x1 - f.x0);  // markers at the ends stay inside the frame
    f.x0 -= pad, f.x1 += pad;
  }
  if (!y_fixed_) {
    f.y0 = std::isfinite(ay) ? ay : 0, f.y1 = std::isfinite(by) && by > ay ? by : f.y0 + 1;
    const double pad = 0.06 * (f.y1 - f.y0);
    f.y1 += pad;
    if (f.y0 != 0) f.y0 -= pad;
  }
  return f;
}

void SvgPlot::write_axes(std::ostream& s, const Frame& f) const {
  const double L = f.left, T = f.top, pw = f.pw, ph = f.ph;
  s << "<rect x=\"" << L << "\" y=\"" << T << "\" width=\"" << pw << "\" height=\"" << ph
    << "\" fill=\"none\" stroke=\"#444\"/>\n";
  if (categories_.empty())
    for (double t : ticks(f.x0, f.x1))
      s << "<line x1=\"" << f.X(t) << "\" x2=\"" << f.X(t) << "\" y1=\"" << T + ph << "\" y2=\"" << T + ph + 4
        << "\" stroke=\"#444\"/><text x=\"" << f.X(t) << "\" y=\"" << T + ph + 16 << "\" text-anchor=\"middle\">"
        << format_number("%.4g", t) << "</text>\n";
  for (size_t k = 0; k < categories_.size(); ++k)
    s << "<text x=\"" << f.X(double(k)) << "\" y=\"" << T + ph + 16 << "\" text-anchor=\"middle\">"
      << xml_escape(categories_[k]) << "</text>\n";
  for (double t : ticks(f.y0, f.y1))
    s << "<line x1=\"" << L - 4 << "\" x2=\"" << L << "\" y1=\"" << f.Y(t) << "\" y2=\"" << f.Y(t)
      << "\" stroke=\"#444\"/><line x1=\"" << L << "\" x2=\"" << L + pw << "\" y1=\"" << f.Y(t) << "\" y2=\"" << f.Y(t)
      << "\" stroke=\"#eee\"/><text x=\"" << L - 7 << "\" y=\"" << f.Y(t) + 4 << "\" text-anchor=\"end\">"
      << format_number("%.4g", t) << "</text>\n";
  s << "<text x=\"" << L + pw / 2 << "\" y=\"" << height_ - 12 << "\" text-anchor=\"middle\">" << xml_escape(x_label_)
    << "</text>\n";
  s << "<text transform=\"translate(16," << T + ph / 2 << ") rotate(-90)\" text-anchor=\"middle\">"
    << xml_escape(y_label_) << "</text>\n";
}

void SvgPlot::write_item(std::ostream& s, const Item& it, const Frame& f) {
  if (it.svg_kind == "vband") {
    s << "<rect x=\"" << f.X(it.x[0]) << "\" y=\"" << f.top << "\" width=\"" << f.X(it.x[1]) - f.X(it.x[0])
      << "\" height=\"" << f.ph << "\" fill=\"" << it.colour << "\" fill-opacity=\"" << it.opacity << "\"/>\n";
  } else if (it.svg_kind == "vline") {
    s << "<line x1=\"" << f.X(it.x[0]) << "\" x2=\"" << f.X(it.x[0]) << "\" y1=\"" << f.top << "\" y2=\""
      << f.top + f.ph << "\" stroke=\"" << it.colour << "\" stroke-dasharray=\"4 3\"/>\n";
  } else if (it.svg_kind == "bars") {
    for (size_t k = 0; k < it.x.size(); ++k) {
      if (!std::isfinite(it.y[k])) continue;
      const double top = f.Y(std::max(it.y[k], 0.0)), base = f.Y(std::min(it.y[k], 0.0));
      s << "<rect x=\"" << f.X(it.x[k]) << "\" y=\"" << top << "\" width=\""
        << std::max(0.5, f.X(it.x[k] + it.w[k]) - f.X(it.x[k])) << "\" height=\"" << std::max(0.0, base - top)
        << "\" fill=\"" << it.colour << "\" fill-opacity=\"" << it.opacity << "\"/>\n";
    }
  } else if (it.svg_kind == "line") {
    s << "<polyline fill=\"none\" stroke=\"" << it.colour << "\" stroke-width=\"1.6\""
      << (it.dashed ? " stroke-dasharray=\"5 3\"" : "") << " points=\"";
    for (size_t k = 0; k < it.x.size(); ++k)
      if (std::isfinite(it.x[k]) && std::isfinite(it.y[k])) s << f.X(it.x[k]) << ',' << f.Y(it.y[k]) << ' ';
    s << "\"/>\n";
  } else if (it.svg_kind == "markers") {
    for (size_t k = 0; k < it.x.size(); ++k)
      if (std::isfinite(it.x[k]) && std::isfinite(it.y[k]))
        s << "<circle cx=\"" << f.X(it.x[k]) << "\" cy=\"" << f.Y(it.y[k]) << "\" r=\"3.5\" fill=\"" << it.colour
          << "\"/>\n";
  } else if (it.svg_kind == "errors") {
    for (size_t k = 0; k < it.x.size(); ++k)
      if (std::isfinite(it.y[k]) && std::isfinite(it.y2[k]))
        s << "<line x1=\"" << f.X(it.x[k]) << "\" x2=\"" << f.X(it.x[k]) << "\" y1=\"" << f.Y(it.y[k]) << "\" y2=\""
          << f.Y(it.y2[k]) << "\" stroke=\"" << it.colour << "\" stroke-width=\"1.2\"/>\n";
  }
}

void SvgPlot::write_legend(std::ostream& s, const Frame& f) const {
  int row = 0;
  for (const Item& it : items_) {
    if (it.label.empty()) continue;
    const double y = f.top + 12 + 14 * row++, x = f.left + f.pw;
    s << "<rect x=\"" << x - 150 << "\" y=\"" << y - 8 << "\" width=\"12\" height=\"8\" fill=\"" << it.colour
      << "\" fill-opacity=\"" << std::max(0.4, it.opacity) << "\"/><text x=\"" << x - 134 << "\" y=\"" << y << "\">"
      << xml_escape(it.label) << "</text>\n";
  }
}

std::string SvgPlot::render() const {
  const Frame f = frame();
  std::ostringstream s;
  s << "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"" << width_ << "\" height=\"" << height_
    << "\" viewBox=\"0 0 " << width_ << ' ' << height_ << "\" font-family=\"sans-serif\" font-size=\"11\">\n";
  s << "<rect width=\"100%\" height=\"100%\" fill=\"white\"/>\n";
  s << "<text x=\"" << width_ / 2 << "\" y=\"18\" text-anchor=\"middle\" font-size=\"13\">" << xml_escape(title_)
    << "</text>\n";
  std::ostringstream axes, items, legend;
  write_axes(axes, f);
  for (const Item& it : items_) write_item(items, it, f);
  write_legend(legend, f);
  // One page holds many charts, and a clip path's id is global to the page: each chart's id is a
  // hash of its own size, title and content, so no chart borrows another's box and the same chart
  // gets the same id in every run.
  const std::string clip = "plot-" + text_hash_fnv1a64(std::to_string(width_) + "x" + std::to_string(height_) + title_ +
                                                       axes.str() + items.str() + legend.str());
  s << "<defs><clipPath id=\"" << clip << "\"><rect x=\"" << f.left << "\" y=\"" << f.top << "\" width=\"" << f.pw
    << "\" height=\"" << f.ph << "\"/></clipPath></defs>\n";
  s << axes.str() << "<g clip-path=\"url(#" << clip << ")\">\n"
    << items.str() << "</g>\n"
    << legend.str() << "</svg>\n";
  return s.str();
}

std::string svg_grid(const std::vector<std::string>& charts, int columns, int cell_width, int cell_height) {
  const int rows = static_cast<int>((charts.size() + columns - 1) / columns);
  std::ostringstream s;
  s << "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"" << columns * cell_width << "\" height=\""
    << rows * cell_height << "\">\n";
  for (size_t k = 0; k < charts.size(); ++k) {
    const std::string& c = charts[k];
    const size_t at = c.find("<svg ");
    if (at == std::string::npos) continue;
    s << c.substr(0, at + 5) << "x=\"" << (k % columns) * cell_width << "\" y=\"" << (k / columns) * cell_height
      << "\" " << c.substr(at + 5);
  }
  s << "</svg>\n";
  return s.str();
}

}  // namespace orderband
