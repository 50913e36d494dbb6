// Test helpers shared by the end-to-end tests: whole files in and out, quoting for /bin/sh, reading CSV.
#pragma once

#include <algorithm>
#include <filesystem>
#include <stdlib.h>

#include <cstdlib>
#include <fstream>
#include <sstream>
#include <string>
#include <vector>

namespace gridtruth::test_files {

/// The whole file (empty when it cannot be read).
inline std::string slurp(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  std::ostringstream s;
  s << in.rdbuf();
  return s.str();
}

/// Every input the fuzzers keep (needs GRIDTRUTH_SOURCE_DIR): the seeds of each target (fuzz/corpus/<target>/) and
/// the inputs that once failed (fuzz/regressions/), README files left out; sorted, so failures name the same file
/// first on every run.
inline std::vector<std::filesystem::path> kept_fuzz_inputs(const std::string& source_dir) {
  std::vector<std::filesystem::path> files;
  for (const char* dir : {"/fuzz/corpus", "/fuzz/regressions"}) {
    const std::filesystem::path p = source_dir + dir;
    if (!std::filesystem::exists(p)) continue;
    for (const auto& e : std::filesystem::recursive_directory_iterator(p))
      if (e.is_regular_file() && e.path().filename().string()[0] != '.' && e.path().extension() != ".md")
        files.push_back(e.path());
  }
  std::sort(files.begin(), files.end());
  return files;
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

/// A fresh directory under /tmp for one test (mkdtemp), removed with everything in it when the object goes.
/// dir() is empty when it could not be made.
class ScratchDir {
 public:
  explicit ScratchDir(const std::string& tag) {
    std::string name = "/tmp/gridtruth-" + tag + "-XXXXXX";
    if (mkdtemp(name.data()) != nullptr) dir_ = name;
  }
  ~ScratchDir() {
    if (!dir_.empty()) std::system(("rm -rf " + shell_quote(dir_)).c_str());
  }
  ScratchDir(const ScratchDir&) = delete;
  ScratchDir& operator=(const ScratchDir&) = delete;
  const std::string& dir() const { return dir_; }
  std::string path(const std::string& name) const { return dir_ + "/" + name; }

 private:
  std::string dir_;
};

/// An RFC 4180 parser written for the tests (independent of the library's reader): records of fields. A CRLF or
/// LF ends a record (section 2.1); quoted fields may hold commas, quotes (doubled) and line breaks.
inline std::vector<std::vector<std::string>> parse_csv(const std::string& text) {
  std::vector<std::vector<std::string>> rows;
  std::vector<std::string> row;
  std::string field;
  bool quoted = false, any = false;
  for (std::size_t k = 0; k < text.size(); ++k) {
    const char c = text[k];
    if (quoted) {
      if (c == '"' && k + 1 < text.size() && text[k + 1] == '"') {
        field += '"';
        ++k;
      } else if (c == '"') {
        quoted = false;
      } else {
        field += c;
      }
      continue;
    }
    any = true;
    if (c == '"') {
      quoted = true;
    } else if (c == ',') {
      row.push_back(field);
      field.clear();
    } else if (c == '\r' && k + 1 < text.size() && text[k + 1] == '\n') {
      // CRLF ends the record (RFC 4180 section 2.1); the LF is handled next.
    } else if (c == '\n') {
      row.push_back(field);
      field.clear();
      rows.push_back(row);
      row.clear();
      any = false;
    } else {
      field += c;
    }
  }
  if (any) {
    row.push_back(field);
    rows.push_back(row);
  }
  return rows;
}

}  // namespace gridtruth::test_files
