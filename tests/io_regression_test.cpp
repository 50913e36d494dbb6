// Replays the fuzzing seeds (fuzz/corpus/*/) and every input the fuzzers ever found failing (fuzz/regressions)
// through all readers: each must end in features that hold a geometry or an error, or in gridtruth::Error.
#include <gtest/gtest.h>

#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>
#include <vector>

#include "gridtruth/error.hpp"
#include "gridtruth/io.hpp"
#include "test_files.hpp"

namespace {

TEST(ReaderRegressions, EveryKeptInputEndsInFeaturesOrAnError) {
  const auto files = gridtruth::test_files::kept_fuzz_inputs(GRIDTRUTH_SOURCE_DIR);
  ASSERT_FALSE(files.empty()) << "the fuzzing seeds are missing";
  for (const auto& file : files) {
    const std::string text = gridtruth::test_files::slurp(file.string());
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
