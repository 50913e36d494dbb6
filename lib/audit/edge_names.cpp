// gridtruth — the names of the edge models (audit.hpp); EdgeSpec's parse() and to_string() are in auditor.cpp.
#include "gridtruth/audit.hpp"

namespace gridtruth {

std::string_view to_string(EdgeModel model) noexcept {
  switch (model) {
    case EdgeModel::geodesic: return "geodesic";
    case EdgeModel::rhumb: return "rhumb";
    case EdgeModel::straight: return "straight";
  }
  return "";
}

}  // namespace gridtruth
