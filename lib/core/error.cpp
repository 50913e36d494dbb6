#include "core/enum_names.hpp"
#include "gridtruth/error.hpp"

namespace gridtruth {

namespace {
constexpr std::array<detail::EnumName<ErrorCode>, 6> kErrorCodeNames = {
    {{ErrorCode::unknown_crs, "unknown_crs"},
     {ErrorCode::unsupported_crs, "unsupported_crs"},
     {ErrorCode::no_transformation, "no_transformation"},
     {ErrorCode::invalid_argument, "invalid_argument"},
     {ErrorCode::io, "io"},
     {ErrorCode::parse, "parse"}}};
}  // namespace

std::string_view to_string(ErrorCode code) noexcept {
  const std::string_view name = detail::name_of(kErrorCodeNames, code);
  return name.empty() ? "unknown" : name;
}

}  // namespace gridtruth
