// Raster cells: time of true cell areas for a global 30-arc-second geographic grid (21 600 × 43 200 ≈ 9.3×10⁸
// cells) aggregated per row, of its class areas streamed in strips, and of projected grids per block.
// Items are cells: Google Benchmark's items_per_second gives the rate; time per 10⁸ cells = 10⁸ / rate.
#include <benchmark/benchmark.h>

#include <cstdint>
#include <vector>

#include "gridtruth/cells.hpp"

namespace {

using namespace gridtruth;

GridSpec global_30s() {
  GridSpec g;
  g.crs = "EPSG:4326";
  g.origin_x = -180;
  g.origin_y = 90;
  g.pixel_x = 1.0 / 120;
  g.pixel_y = -1.0 / 120;
  g.cols = 43200;
  g.rows = 21600;
  return g;
}

// Per-row records of the whole grid (one closed-form area per row).
void BM_GeographicGlobal30sRows(benchmark::State& state) {
  const CellGrid grid(global_30s());
  for (auto _ : state) {
    double total_m2 = 0;
    grid.for_each_record(1, [&](const CellRecord& r) { total_m2 += r.true_area_m2; });
    benchmark::DoNotOptimize(total_m2);
  }
  state.SetItemsProcessed(state.iterations() * static_cast<std::int64_t>(43200) * 21600);
}
BENCHMARK(BM_GeographicGlobal30sRows)->Unit(benchmark::kMillisecond);

// Class areas of the whole grid, streamed in strips of 64 rows (every code of every cell is read).
void BM_GeographicGlobal30sClasses(benchmark::State& state) {
  const CellGrid grid(global_30s());
  const std::size_t strip_rows = 64, cols = 43200, rows = 21600;
  std::vector<std::uint16_t> strip(strip_rows * cols);
  for (std::size_t k = 0; k < strip.size(); ++k) strip[k] = static_cast<std::uint16_t>((k * 2654435761u >> 13) % 17);
  for (auto _ : state) {
    ClassAreaAccumulator acc(grid);
    for (std::size_t r = 0; r < rows; r += strip_rows) {
      const std::size_t n = std::min(strip_rows, rows - r);
      if (n < strip_rows) strip.resize(n * cols);
      acc.add_strip(r, strip);
    }
    strip.resize(strip_rows * cols);
    benchmark::DoNotOptimize(acc.result());
  }
  state.SetItemsProcessed(state.iterations() * static_cast<std::int64_t>(cols) * static_cast<std::int64_t>(rows));
}
BENCHMARK(BM_GeographicGlobal30sClasses)->Unit(benchmark::kMillisecond);

// Projected grids per block of 256 × 256: 30 m cells of UTM zone 32N (1 000 × 1 000) and 1 km cells of the global
// EASE-Grid 2.0 (EPSG:6933, 2 000 × 1 000).
void BM_Projected(benchmark::State& state, const char* crs, double ox, double oy, double pixel, std::size_t cols,
                  std::size_t rows) {
  GridSpec g;
  g.crs = crs;
  g.origin_x = ox;
  g.origin_y = oy;
  g.pixel_x = pixel;
  g.pixel_y = -pixel;
  g.cols = cols;
  g.rows = rows;
  const CellGrid grid(g);
  for (auto _ : state) {
    double total_m2 = 0;
    grid.for_each_record(256, [&](const CellRecord& r) { total_m2 += r.true_area_m2; });
    benchmark::DoNotOptimize(total_m2);
  }
  state.SetItemsProcessed(state.iterations() * static_cast<std::int64_t>(cols * rows));
}
BENCHMARK_CAPTURE(BM_Projected, utm32n_30m, "EPSG:32632", 400000, 5600000, 30, 1000, 1000)
    ->Unit(benchmark::kMillisecond);
BENCHMARK_CAPTURE(BM_Projected, ease2_1km, "EPSG:6933", -1000000, 6000000, 1000, 2000, 1000)
    ->Unit(benchmark::kMillisecond);

}  // namespace

BENCHMARK_MAIN();
