#include "gridtruth/error.hpp"

namespace gridtruth {

std::string_view to_string(ErrorCode code) noexcept {
  switch (code) {
    case ErrorCode::unknown_crs: return "unknown_crs";
    case ErrorCode::unsupported_crs: return "unsupported_crs";
    case ErrorCode::no_transformation: return "no_transformation";
    case ErrorCode::invalid_argument: return "invalid_argument";
    case ErrorCode::io: return "io";
    case ErrorCode::parse: return "parse";
  }
  return "unknown";
}

}  // namespace gridtruth
