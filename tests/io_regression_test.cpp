// Replays the fuzzing seeds (fuzz/corpus) and every input the fuzzer ever found failing (fuzz/regressions)
// through all readers: each must end in features that hold a geometry or an error, or in gridtruth::Error.
#include <gtest/gtest.h>

#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>
#include <vector>

#include "gridtruth/error.hpp"
#include "gridtruth/io.hpp"

namespace {

std::vector<std::filesystem::path> inputs() {
  std::vector<std::filesystem::path> files;
  for (const char* dir : {"/fuzz/corpus", "/fuzz/regressions"}) {
    const std::filesystem::path p = std::string(GRIDTRUTH_SOURCE_DIR) + dir;
    if (!std::filesystem::exists(p)) continue;
    for (const auto& e : std::filesystem::directory_iterator(p))
      if (e.is_regular_file() && e.path().filename().string()[0] != '.' && e.path().extension() != ".md")
        files.push_back(e.path());
  }
  return files;
}

TEST(ReaderRegressions, EveryKeptInputEndsInFeaturesOrAnError) {
  const auto files = inputs();
  ASSERT_FALSE(files.empty()) << "the fuzzing seeds are missing";
  for (const auto& file : files) {
    std::ifstream in(file, std::ios::binary);
    std::ostringstream s;
    s << in.rdbuf();
    const std::string text = s.str();
    for (auto format : {gridtruth::InputFormat::automatic, gridtruth::InputFormat::geojson,
                        gridtruth::InputFormat::ndjson, gridtruth::InputFormat::csv}) {
      std::istringstream stream(text);
      gridtruth::ReaderOptions options;
      options.format = format;
      gridtruth::FeatureReader reader(stream, options);
      std::size_t count = 0;
      try {
        while (auto f = reader.next()) {
          ++count;
          EXPECT_EQ(f->position, count) << file;
          EXPECT_FALSE(f->id.empty()) << file;
          EXPECT_NE(f->geometry.has_value(), !f->error.empty()) << file << ": " << f->error;
        }
      } catch (const gridtruth::Error& e) {
        EXPECT_TRUE(e.code() == gridtruth::ErrorCode::parse || e.code() == gridtruth::ErrorCode::invalid_argument)
            << file;
      }
    }
    try {
      (void)gridtruth::parse_wkt(text);
    } catch (const gridtruth::Error& e) {
      EXPECT_EQ(e.code(), gridtruth::ErrorCode::parse) << file;
    }
  }
}

}  // namespace
