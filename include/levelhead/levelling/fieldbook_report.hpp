#pragma once
// Outputs of `levelhead reduce`, written all-or-nothing into one folder.
//
// sections.csv  from, to, dh (m), length (m, one-way), setups, runs, run,
//               date, kind (section | side-shot), flags, spread (m),
//               spread_tolerance (m), levelled_length (m), imbalance (m),
//               rows. Ready for `levelhead adjust` and `levelhead loops`.
// setups.csv    every setup with its readings, distances, corrections and
//               failed checks.
// summary.json  counts, options in force, failed checks, closures.

#include <filesystem>
#include <string>

#include "levelhead/levelling/fieldbook.hpp"

namespace levelhead {

void write_field_book_outputs(const FieldBook& book, const FieldBookResult& result,
                              const FieldBookOptions& options, const std::filesystem::path& folder);

std::string field_book_summary_text(const FieldBookResult& result);

bool field_book_has_failed_checks(const FieldBookResult& result);

}  // namespace levelhead
