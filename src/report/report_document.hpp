#pragma once
// Rendering of the report: one document written as Markdown and as
// self-contained HTML.

#include <fmt/format.h>

#include <filesystem>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include "levelhead/report/report.hpp"
#include "report/svg.hpp"

namespace levelhead::report {

namespace fs = std::filesystem;

// Text taken literally in Markdown (ids and file names may hold markup).
std::string markdown_text(const std::string& text);

// One document rendered twice: Markdown (figures as files) and HTML (inline).
class Document {
 public:
  // Sections (level 2) get an id "sec-N" for the table of contents.
  void heading(int level, const std::string& text) {
    md_ += fmt::format("\n{} {}\n\n", std::string(static_cast<std::size_t>(level), '#'),
                       markdown_text(text));
    if (level == 2) {
      sections_.push_back(text);
      html_ += fmt::format("<h2 id=\"{}\">{}</h2>\n", section_id(sections_.size() - 1),
                           report::escape_xml(text));
    } else {
      html_ += fmt::format("<h{0}>{1}</h{0}>\n", level, report::escape_xml(text));
    }
  }
  // A list of the sections of `documents` (in order), linked in HTML; the
  // ids continue from one document to the next as they are rendered.
  void contents(const std::vector<std::string>& titles) {
    md_ += "Contents: " + markdown_text(fmt::format("{}", fmt::join(titles, "; "))) + "\n\n";
    html_ += "<nav class=\"contents\"><strong>Contents</strong><ol>\n";
    for (std::size_t i = 0; i < titles.size(); ++i) {
      html_ += fmt::format("<li><a href=\"#{}\">{}</a></li>\n", section_id(i),
                           report::escape_xml(titles[i]));
    }
    html_ += "</ol></nav>\n";
  }
  const std::vector<std::string>& sections() const { return sections_; }
  // `other`'s text after this one's (figures and sections as rendered).
  void append(const Document& other) {
    md_ += other.md_;
    html_ += other.html_;
    figures_.insert(figures_.end(), other.figures_.begin(), other.figures_.end());
  }
  // Continues the numbering of section ids after `count` sections of an
  // earlier document.
  void number_sections_from(std::size_t count) { section_offset_ = count; }
  void paragraph(const std::string& text) {
    md_ += markdown_text(text) + "\n\n";
    html_ += "<p>" + report::escape_xml(text) + "</p>\n";
  }
  void bullets(const std::vector<std::string>& items) {
    if (items.empty()) return;
    html_ += "<ul>\n";
    for (const std::string& i : items) {
      md_ += "- " + markdown_text(i) + "\n";
      html_ += "<li>" + report::escape_xml(i) + "</li>\n";
    }
    md_ += "\n";
    html_ += "</ul>\n";
  }
  void table(const std::vector<std::string>& header,
             const std::vector<std::vector<std::string>>& rows, std::size_t limit = 60) {
    md_ += "|";
    html_ += "<table>\n<thead><tr>";
    for (const std::string& h : header) {
      md_ += fmt::format(" {} |", markdown_text(h));
      html_ += "<th>" + report::escape_xml(h) + "</th>";
    }
    md_ += "\n|";
    for (std::size_t i = 0; i < header.size(); ++i) md_ += "---|";
    md_ += "\n";
    html_ += "</tr></thead>\n<tbody>\n";
    for (std::size_t r = 0; r < rows.size() && r < limit; ++r) {
      md_ += "|";
      html_ += "<tr>";
      for (const std::string& c : rows[r]) {
        md_ += fmt::format(" {} |", markdown_text(c));
        html_ += "<td>" + report::escape_xml(c) + "</td>";
      }
      md_ += "\n";
      html_ += "</tr>\n";
    }
    html_ += "</tbody></table>\n";
    md_ += "\n";
    if (rows.size() > limit) {
      paragraph(fmt::format("({} more rows in the stage's table.)", rows.size() - limit));
    }
  }
  void figure(const std::string& name, const Svg& svg, const std::string& caption) {
    const std::string file = "figures/" + name + ".svg";
    figures_.emplace_back(file, svg.str());
    md_ += fmt::format("![{0}]({1})\n\n*{0}*\n\n", markdown_text(caption), file);
    html_ += fmt::format("<figure id=\"fig-{}\">\n{}<figcaption>{}</figcaption>\n</figure>\n", name,
                         svg.str(), report::escape_xml(caption));
  }
  const std::string& markdown() const { return md_; }
  const std::string& html() const { return html_; }
  const std::vector<std::pair<std::string, std::string>>& figures() const { return figures_; }

 private:
  std::string section_id(std::size_t index) const {
    return fmt::format("sec-{}", section_offset_ + index + 1);
  }
  std::string md_, html_;
  std::vector<std::string> sections_;
  std::size_t section_offset_ = 0;
  std::vector<std::pair<std::string, std::string>> figures_;
};

// The report's style sheet (screen and print).
extern const char* const css;

// Versions for the audit record.
std::string gdal_version();
std::string epsg_version();

std::string fixed(double value, int decimals);

}  // namespace levelhead::report
