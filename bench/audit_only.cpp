// Times the library audit alone (features already in memory, one thread) for a file, to compare with the whole
// command on the same file.   audit_only FILE TARGET_CRS
#include <gridtruth/audit.hpp>
#include <gridtruth/io.hpp>

#include <chrono>
#include <cstdio>

int main(int argc, char** argv) {
  if (argc != 3) {
    std::fprintf(stderr, "usage: audit_only FILE TARGET_CRS\n");
    return 2;
  }
  std::vector<gridtruth::Geometry> geometries;
  gridtruth::FeatureReader reader{std::string(argv[1])};
  while (auto f = reader.next()) {
    if (f->geometry) geometries.push_back(std::move(*f->geometry));
  }
  gridtruth::AuditOptions options;
  options.target_crs = argv[2];
  const gridtruth::Auditor auditor(options);
  const auto start = std::chrono::steady_clock::now();
  double sink = 0;
  for (const auto& g : geometries) {
    const auto r = auditor.audit(g);
    if (r.area) sink += r.area->grid;
  }
  const double seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  std::printf("%.6f %zu %g\n", seconds, geometries.size(), sink);
  return 0;
}
