// What every report page and table shares: numbers formatted one way, one page head and style.
#pragma once

#include <string>

namespace orderband {

/// A number formatted with one printf conversion for a double (e.g. "%.4f", "%g").
std::string format_number(const char* printf_format, double value);

/// The head of a self-contained report page: doctype, title (escaped here), the shared style,
/// and the opening <body>.
std::string html_page_head(const std::string& title);

}  // namespace orderband
