// gridtruth — the library's one exception type.
#pragma once

#include <stdexcept>
#include <string>
#include <string_view>

namespace gridtruth {

/// Stable error codes carried by gridtruth::Error.
enum class ErrorCode {
  unknown_crs,         ///< PROJ cannot make a CRS of the definition
  unsupported_crs,     ///< a CRS of a kind this operation does not take (e.g. a geographic target)
  no_transformation,   ///< PROJ offers no operation between the two CRSs
  invalid_argument,    ///< an option or argument out of range or malformed
  io,                  ///< a file could not be read or written
  parse,               ///< an input container (file, stream) is unreadable as a whole
};

/// The code's stable name, spelled as the enumerator ("unknown_crs", "unsupported_crs", "no_transformation",
/// "invalid_argument", "io", "parse"); never throws.
std::string_view to_string(ErrorCode code) noexcept;

/// Thrown at the API boundary when an object cannot be built or a call cannot proceed at all.
/// Per-feature problems are never thrown: they are reported in the feature's result.
class Error : public std::runtime_error {
 public:
  /// An error with a stable code and a message for people (what(): names the CRS, option or file at fault).
  Error(ErrorCode code, const std::string& message) : std::runtime_error(message), code_(code) {}
  /// The stable code, for programs that react to the kind of error.
  ErrorCode code() const noexcept { return code_; }

 private:
  ErrorCode code_;
};

}  // namespace gridtruth
