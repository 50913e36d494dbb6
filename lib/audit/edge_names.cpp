// gridtruth — the names of the edge models (audit.hpp); EdgeSpec's parse() and to_string() are in auditor.cpp.
#include <array>

#include "core/enum_names.hpp"
#include "gridtruth/audit.hpp"

namespace gridtruth {

namespace {
constexpr std::array<detail::EnumName<EdgeModel>, 3> kEdgeModelNames = {
    {{EdgeModel::geodesic, "geodesic"}, {EdgeModel::rhumb, "rhumb"}, {EdgeModel::straight, "straight"}}};
}  // namespace

std::string_view to_string(EdgeModel model) noexcept { return detail::name_of(kEdgeModelNames, model); }

}  // namespace gridtruth
