// What every report page and table shares.
#include "orderband/html_page.hpp"

#include <cstdio>

#include "orderband/svg_plot.hpp"

namespace orderband {

std::string format_number(const char* printf_format, double value) {
  char b[64];
  std::snprintf(b, sizeof b, printf_format, value);
  return b;
}

std::string html_page_head(const std::string& title) {
  return "<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\"><title>" + xml_escape(title) +
         "</title>\n<style>"
         "body{font-family:sans-serif;max-width:1150px;margin:24px auto;color:#222}"
         "table{border-collapse:collapse;margin:8px 0}td,th{border:1px solid #ccc;padding:4px 8px;text-align:right}"
         "th{background:#f3f3f3}td:first-child,th:first-child{text-align:left}"
         ".plots{display:flex;flex-wrap:wrap;gap:8px}"
         "figure{margin:10px 0}figcaption{font-size:0.9em;color:#444;max-width:900px}"
         ".caution{font-size:0.85em;color:#555}"
         "</style></head><body>\n";
}

}  // namespace orderband
