// The tool's output files: a temporary name, a rename on success, signal handlers that remove what is unfinished.
#include "output_file.hpp"

#include <fcntl.h>
#include <limits.h>
#include <signal.h>
#include <sys/stat.h>
#include <unistd.h>

#include <atomic>
#include <cctype>
#include <cerrno>
#include <cstdlib>
#include <cstring>
#include <iostream>
#include <streambuf>
#include <vector>

namespace gridtruth::cli {

std::string errno_text(int error_number) {
  std::string text = std::strerror(error_number);
  if (!text.empty()) text[0] = static_cast<char>(std::tolower(static_cast<unsigned char>(text[0])));
  return text;
}

std::string flush_stdout_problem() {
  errno = 0;
  std::cout.flush();
  if (std::cout) return {};
  const int error = errno;
  return "could not write standard output" + (error != 0 ? ": " + errno_text(error) : std::string());
}

namespace {

// ---- Temporary files the signal handlers remove -------------------------------------------------------------
// A fixed table, so that the handler touches no allocator: a slot is filled, then published by `used`.
constexpr int temp_slots = 16;
struct TempSlot {
  std::atomic<bool> used{false};
  char path[PATH_MAX] = {};
};
TempSlot temp_table[temp_slots];
static_assert(std::atomic<bool>::is_always_lock_free, "the signal handler reads these flags");

extern "C" void remove_temps_and_reraise(int signal_number) {
  for (TempSlot& slot : temp_table) {
    if (slot.used.load()) unlink(slot.path);  // async-signal-safe
  }
  struct sigaction action {};
  action.sa_handler = SIG_DFL;
  sigemptyset(&action.sa_mask);
  sigaction(signal_number, &action, nullptr);
  raise(signal_number);
}

void install_handlers_once() {
  static const bool installed = [] {
    for (const int s : {SIGINT, SIGTERM, SIGHUP, SIGPIPE}) {
      struct sigaction old {};
      sigaction(s, nullptr, &old);
      if (old.sa_handler == SIG_IGN) continue;  // e.g. nohup: an ignored signal stays ignored
      struct sigaction action {};
      action.sa_handler = remove_temps_and_reraise;
      sigemptyset(&action.sa_mask);
      sigaction(s, &action, nullptr);
    }
    return true;
  }();
  (void)installed;
}

int register_temp(const std::string& path) {
  if (path.size() >= PATH_MAX) return -1;
  install_handlers_once();
  for (int k = 0; k < temp_slots; ++k) {
    TempSlot& slot = temp_table[k];
    if (slot.used.load()) continue;
    std::memcpy(slot.path, path.c_str(), path.size() + 1);
    slot.used.store(true);
    return k;
  }
  return -1;  // more outputs than slots: still removed by the destructor, not by a signal
}

void unregister_temp(int slot) {
  if (slot >= 0) temp_table[slot].used.store(false);
}

/// A stream buffer over a file descriptor that keeps the errno of the first failed write.
class FdBuffer final : public std::streambuf {
 public:
  explicit FdBuffer(int fd) : fd_(fd), buffer_(1 << 16) { setp(buffer_.data(), buffer_.data() + buffer_.size()); }
  int error() const noexcept { return error_; }

 protected:
  int_type overflow(int_type c) override {
    if (drain() != 0) return traits_type::eof();
    if (!traits_type::eq_int_type(c, traits_type::eof())) {
      *pptr() = traits_type::to_char_type(c);
      pbump(1);
    }
    return traits_type::not_eof(c);
  }
  int sync() override { return drain(); }

 private:
  int drain() {
    const char* p = pbase();
    std::size_t left = static_cast<std::size_t>(pptr() - pbase());
    while (left > 0 && error_ == 0) {
      const ssize_t n = ::write(fd_, p, left);
      if (n < 0) {
        if (errno == EINTR) continue;
        error_ = errno;
        break;
      }
      p += n;
      left -= static_cast<std::size_t>(n);
    }
    setp(buffer_.data(), buffer_.data() + buffer_.size());
    return error_ == 0 ? 0 : -1;
  }

  int fd_;
  std::vector<char> buffer_;
  int error_ = 0;
};

std::string directory_of(const std::string& path) {
  const auto slash = path.rfind('/');
  if (slash == std::string::npos) return ".";
  if (slash == 0) return "/";
  return path.substr(0, slash);
}

std::string base_of(const std::string& path) {
  const auto slash = path.rfind('/');
  return slash == std::string::npos ? path : path.substr(slash + 1);
}

bool is_stdout(const std::string& path) { return path.empty() || path == "-"; }

}  // namespace

struct OutputFile::Impl {
  std::string path;       // the destination (symbolic links resolved)
  std::string temp_path;  // empty: written in place
  int fd = -1;
  bool own_fd = false;
  int slot = -1;
  FdBuffer buffer;
  std::ostream stream;
  bool finished = false;  // flushed and closed, not renamed yet
  bool done = false;

  explicit Impl(int descriptor) : fd(descriptor), buffer(descriptor), stream(&buffer) {}
};

OutputFile::OutputFile(const std::string& path) : OutputFile(path, std::string(), false) {}

std::unique_ptr<OutputFile> OutputFile::for_named_writer(const std::string& path, const std::string& suffix) {
  std::unique_ptr<OutputFile> file(new OutputFile(path, suffix, true));
  Impl& s = *file->impl_;
  if (s.temp_path.empty()) throw OutputError("cannot write " + file->name_ + ": it must be a regular file");
  // The library creates the file by name (it refuses to overwrite one): the name stays reserved for it, and the
  // signal handlers still remove whatever it writes there.
  ::close(s.fd);
  s.own_fd = false;
  ::unlink(s.temp_path.c_str());
  return file;
}

const std::string& OutputFile::temp_path() const noexcept { return impl_->temp_path; }

OutputFile::OutputFile(const std::string& path, const std::string& temp_suffix, bool named_writer)
    : name_(is_stdout(path) ? "standard output" : path) {
  if (is_stdout(path) && named_writer) throw OutputError("cannot write standard output: a file name is needed");
  if (is_stdout(path)) {
    std::cout.flush();  // anything the command wrote to std::cout comes first
    impl_ = std::make_unique<Impl>(STDOUT_FILENO);
    return;
  }
  std::string target = path;
  struct stat st {};
  const bool exists = ::stat(path.c_str(), &st) == 0;
  if (exists && S_ISDIR(st.st_mode)) throw OutputError("cannot write " + path + ": it is a directory");
  if (exists && !S_ISREG(st.st_mode) && named_writer)
    throw OutputError("cannot write " + path + ": it is not a regular file");
  if (exists && !S_ISREG(st.st_mode)) {  // a device or a FIFO: written in place, nothing to rename
    const int fd = ::open(path.c_str(), O_WRONLY | O_CLOEXEC);
    if (fd < 0) throw OutputError("cannot write " + path + ": " + errno_text(errno));
    impl_ = std::make_unique<Impl>(fd);
    impl_->own_fd = true;
    return;
  }
  if (exists) {  // a symbolic link is kept: the file it points to is replaced
    char resolved[PATH_MAX];
    if (::realpath(path.c_str(), resolved) != nullptr) target = resolved;
  }
  std::string temp = directory_of(target) + "/." + base_of(target) + ".gridtruth-XXXXXX" + temp_suffix;
  std::vector<char> name(temp.begin(), temp.end());
  name.push_back('\0');
  const int fd = ::mkostemps(name.data(), static_cast<int>(temp_suffix.size()), O_CLOEXEC);
  if (fd < 0) throw OutputError("cannot write " + path + ": " + errno_text(errno));
  temp.assign(name.data());
  const mode_t mask = ::umask(0);
  ::umask(mask);
  ::fchmod(fd, exists ? (st.st_mode & 07777) : (0666 & ~mask));  // the mode an ordinary create would give
  impl_ = std::make_unique<Impl>(fd);
  impl_->own_fd = true;
  impl_->path = target;
  impl_->temp_path = temp;
  impl_->slot = register_temp(temp);
}

OutputFile::~OutputFile() { discard(); }

std::ostream& OutputFile::stream() noexcept { return impl_->stream; }

void OutputFile::discard() noexcept {
  if (!impl_ || impl_->done) return;
  impl_->done = true;
  if (impl_->own_fd) ::close(impl_->fd);
  if (!impl_->temp_path.empty()) {
    ::unlink(impl_->temp_path.c_str());
    unregister_temp(impl_->slot);
  }
}

void OutputFile::finish() {
  Impl& s = *impl_;
  if (s.done || s.finished) return;
  s.stream.flush();
  int error = s.buffer.error();
  if (error == 0 && s.own_fd) {
    if (!s.temp_path.empty() && ::fsync(s.fd) != 0 && errno != EINVAL) error = errno;
    if (::close(s.fd) != 0 && error == 0) error = errno;
    s.own_fd = false;
  }
  if (error != 0) fail(error);
  s.finished = true;
}

void OutputFile::commit() {
  finish();
  Impl& s = *impl_;
  if (s.done) return;
  if (!s.temp_path.empty() && ::rename(s.temp_path.c_str(), s.path.c_str()) != 0) fail(errno);
  s.done = true;
  if (!s.temp_path.empty()) unregister_temp(s.slot);
}

void OutputFile::fail(int error) {
  discard();
  throw OutputError("could not write " + name_ + ": " + errno_text(error));
}

namespace {

struct FileId {
  bool known = false;
  dev_t dev = 0;
  ino_t ino = 0;
};

FileId file_id(const std::string& path, int fd_for_dash) {
  struct stat st {};
  const int rc = (is_stdout(path)) ? ::fstat(fd_for_dash, &st) : ::stat(path.c_str(), &st);
  if (rc != 0) return {};
  // Pipes, terminals and devices are never the same data as a file: only regular files can be overwritten.
  if (!S_ISREG(st.st_mode)) return {};
  return {true, st.st_dev, st.st_ino};
}

}  // namespace

std::string same_file_problem(const std::vector<std::string>& inputs, const std::vector<std::string>& outputs) {
  auto shown = [](const std::string& p, const char* dash) { return is_stdout(p) ? std::string(dash) : p; };
  for (std::size_t o = 0; o < outputs.size(); ++o) {
    const FileId out = file_id(outputs[o], STDOUT_FILENO);
    for (const std::string& input : inputs) {
      if (input.empty()) continue;
      const FileId in = file_id(input, STDIN_FILENO);
      if (out.known && in.known && out.dev == in.dev && out.ino == in.ino)
        return "the output " + shown(outputs[o], "(standard output)") + " is the input " +
               shown(input, "(standard input)") + ": writing it would destroy the input";
    }
    for (std::size_t p = 0; p < o; ++p) {
      if (is_stdout(outputs[o]) || is_stdout(outputs[p])) continue;
      const FileId other = file_id(outputs[p], STDOUT_FILENO);
      if (outputs[o] == outputs[p] || (out.known && other.known && out.dev == other.dev && out.ino == other.ino))
        return "two outputs name the same file " + outputs[o];
    }
  }
  return {};
}

}  // namespace gridtruth::cli
