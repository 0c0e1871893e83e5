#pragma once
// SHA-256 checksums (OpenSSL), for provenance: grids used, stage outputs in
// run.json, the texts a report rests on.
//
// In:  a file (noted as an input, levelhead/core/input_files.hpp) or a text.
// Out: the digest as 64 lowercase hex digits; "" when the file cannot be read.
// Errors: none.

#include <filesystem>
#include <string>

namespace levelhead {

std::string file_sha256(const std::filesystem::path& path);
std::string text_sha256(const std::string& text);

}  // namespace levelhead
