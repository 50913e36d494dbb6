// Test helpers shared by the end-to-end tests: whole files in and out, and quoting for /bin/sh.
#pragma once

#include <fstream>
#include <sstream>
#include <string>

namespace gridtruth::test_files {

/// The whole file (empty when it cannot be read).
inline std::string slurp(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  std::ostringstream s;
  s << in.rdbuf();
  return s.str();
}

/// Writes `text` as the whole file.
inline void spit(const std::string& path, const std::string& text) {
  std::ofstream out(path, std::ios::binary);
  out << text;
}

/// One argument for /bin/sh, in single quotes.
inline std::string shell_quote(const std::string& s) {
  std::string q = "'";
  for (const char c : s) {
    if (c == '\'') q += "'\\''";
    else q += c;
  }
  return q + "'";
}

}  // namespace gridtruth::test_files
