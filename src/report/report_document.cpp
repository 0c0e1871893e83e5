#include "report/report_document.hpp"

#include <gdal.h>
#include <proj.h>

#include <string_view>

namespace levelhead::report {

// Text taken literally in Markdown: ids and file names may hold characters
// that Markdown reads as markup or HTML (CommonMark lets any ASCII
// punctuation be escaped with a backslash).
std::string markdown_text(const std::string& text) {
  std::string out;
  for (const char c : text) {
    if (std::string_view("\\`*_<>[]|").find(c) != std::string_view::npos) out += '\\';
    out += c;
  }
  return out;
}

const char* const css =
    R"(body{font-family:Georgia,'DejaVu Serif',serif;max-width:60em;margin:2em auto;padding:0 1em;color:#1d1d1d;line-height:1.45}
h1{font-family:sans-serif;border-bottom:3px solid #2f8f83;padding-bottom:.2em}
h2{font-family:sans-serif;color:#2c347a;margin-top:2em;border-bottom:1px solid #bbb}
h3{font-family:sans-serif}
table{border-collapse:collapse;margin:.8em 0;font-size:.9em}
th,td{border:1px solid #999;padding:.25em .55em;text-align:left}
th{background:#e9eef0}
figure{margin:1.2em 0;page-break-inside:avoid}
figcaption{font-size:.9em;font-style:italic}
.note{font-size:.85em;color:#444}
@media print{body{max-width:none}h2{page-break-after:avoid}}
)";

std::string gdal_version() { return GDALVersionInfo("RELEASE_NAME"); }

std::string epsg_version() {
  const char* v = proj_context_get_database_metadata(nullptr, "EPSG.VERSION");
  return v ? v : "unknown";
}

std::string fixed(double value, int decimals) { return fmt::format("{:.{}f}", value, decimals); }

}  // namespace levelhead::report
