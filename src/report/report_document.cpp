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
table{border-collapse:collapse;margin:.8em 0;font-size:.9em;max-width:100%}
th,td{border:1px solid #999;padding:.25em .55em;text-align:left;overflow-wrap:anywhere}
th{background:#e9eef0}
figure{margin:1.2em 0;page-break-inside:avoid;break-inside:avoid}
figure svg{max-width:100%;height:auto}
figcaption{font-size:.9em;font-style:italic}
nav.contents{font-family:sans-serif;font-size:.9em;margin:1em 0}
nav.contents ol{margin:.3em 0;columns:2}
.note{font-size:.85em;color:#444}
@page{size:A4;margin:16mm 14mm 18mm;@bottom-center{content:"page " counter(page) " of " counter(pages);font:9pt sans-serif;color:#444}}
@media print{body{max-width:none;margin:0;padding:0;font-size:10.5pt}h2,h3{page-break-after:avoid;break-after:avoid}table,tr{page-break-inside:avoid;break-inside:avoid}}
)";

std::string gdal_version() { return GDALVersionInfo("RELEASE_NAME"); }

std::string epsg_version() {
  const char* v = proj_context_get_database_metadata(nullptr, "EPSG.VERSION");
  return v ? v : "unknown";
}

std::string fixed(double value, int decimals) { return fmt::format("{:.{}f}", value, decimals); }

}  // namespace levelhead::report
