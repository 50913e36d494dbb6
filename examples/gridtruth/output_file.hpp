// The gridtruth tool's output files, shared by every command: written under a temporary name in the destination's
// directory and renamed over it only when complete, so that an interrupted run (SIGINT, SIGTERM, SIGHUP, SIGPIPE),
// a full disk or any write error never leaves a file that looks complete. Standard output ("-" or no path) cannot
// be renamed: a write error there is reported all the same. Errors name their cause from errno ("no space left on
// device"). Also the check that no output names an input (same file id: st_dev and st_ino).
#pragma once

#include <memory>
#include <ostream>
#include <stdexcept>
#include <string>
#include <vector>

namespace gridtruth::cli {

/// Thrown when an output cannot be opened, written or renamed into place; what() names the file and the cause.
struct OutputError : std::runtime_error {
  using std::runtime_error::runtime_error;
};

/// One output of a command. A regular file (or a path that does not exist yet) is written to a temporary file
/// `.NAME.gridtruth-XXXXXX` beside it and renamed over it by commit(); until then the path keeps its old content.
/// Anything else that exists (a device such as /dev/null or /dev/full, a FIFO) is written in place. Empty path or
/// "-": standard output. The destructor removes an uncommitted temporary file, and so do the signal handlers the
/// first temporary file installs (they then re-raise the signal, so the exit status still tells it).
/// Not thread-safe: one thread writes a file.
class OutputFile {
 public:
  /// Opens the output. Throws OutputError naming the path and the cause.
  explicit OutputFile(const std::string& path);
  /// Opens the output for a library that creates the file itself by name (GDAL's GeoPackage driver, SQLite):
  /// the temporary name `.NAME.gridtruth-XXXXXX<suffix>` is reserved, then freed for the library, which writes
  /// it (temp_path()); commit() renames it over `path`, and an uncommitted one is removed as any other. Only a
  /// regular file or a path that does not exist yet: anything else (standard output, a device) is OutputError.
  static std::unique_ptr<OutputFile> for_named_writer(const std::string& path, const std::string& suffix);
  /// The name the library writes (for_named_writer()); empty for a stream output written in place.
  const std::string& temp_path() const noexcept;
  ~OutputFile();
  OutputFile(const OutputFile&) = delete;
  OutputFile& operator=(const OutputFile&) = delete;

  std::ostream& stream() noexcept;
  /// The name for messages: the path, or "standard output".
  const std::string& name() const noexcept { return name_; }
  /// Flushes and closes (standard output: flushes). Throws OutputError naming the cause of the first failed write,
  /// flush or close; the temporary file is then removed. Call it on every output before committing any, so that
  /// one failing output leaves none renamed into place.
  void finish();
  /// finish(), then renames the temporary file over the path. Throws OutputError as finish() does, or for the
  /// rename.
  void commit();
  /// Removes the temporary file without committing (nothing for standard output or a device).
  void discard() noexcept;

 private:
  [[noreturn]] void fail(int error_number);
  OutputFile(const std::string& path, const std::string& temp_suffix, bool named_writer);

  struct Impl;
  std::unique_ptr<Impl> impl_;
  std::string name_;
};

/// The first problem among a command's files, or "" when none: an output (empty or "-": standard output) that is
/// the same file as an input ("-": standard input), compared by file id (st_dev, st_ino) so that links and other
/// spellings of a path count; or two outputs naming the same path. Files that do not exist yet match nothing.
std::string same_file_problem(const std::vector<std::string>& inputs, const std::vector<std::string>& outputs);

/// Flushes std::cout (where a command prints its tables): "" when every byte went out, else a message naming the
/// cause ("could not write standard output: no space left on device"), for an exit status 2.
std::string flush_stdout_problem();

/// The text of an errno value for messages, lower case ("no space left on device").
std::string errno_text(int error_number);

}  // namespace gridtruth::cli
