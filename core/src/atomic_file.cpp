#include "swashtune/atomic_file.hpp"

#include <dirent.h>
#include <fcntl.h>
#include <signal.h>
#include <sys/stat.h>
#include <unistd.h>

#include <cerrno>
#include <cstdio>
#include <cstring>
#include <ctime>
#include <filesystem>
#include <fstream>
#include <optional>
#include <sstream>

namespace swashtune {

namespace fs = std::filesystem;

namespace {

constexpr const char* kTemporaryMark = ".partial-";

std::string temporary_name(const std::string& path) { return path + kTemporaryMark + std::to_string(::getpid()); }

std::string error_text(int error) {
  std::string text = std::strerror(error);
  if (error == ENOSPC || error == EDQUOT) text += " (the disk or quota is full)";
  return text;
}

[[noreturn]] void fail(const std::string& shown, const char* what, int error) {
  throw FileError(shown + ": " + what + ": " + error_text(error));
}

std::string folder_of(const std::string& path) {
  const fs::path parent = fs::path(path).parent_path();
  return parent.empty() ? "." : parent.string();
}

// Writes all of `size` bytes, across short writes and signals. Returns 0 or errno.
int write_all(int fd, const char* data, std::size_t size) {
  while (size > 0) {
    const ssize_t n = ::write(fd, data, size);
    if (n < 0) {
      if (errno == EINTR) continue;
      return errno;
    }
    if (n == 0) return EIO;
    data += n;
    size -= static_cast<std::size_t>(n);
  }
  return 0;
}

// fsync, then close; returns 0 or the first errno. The descriptor is closed either way.
int sync_and_close(int fd) {
  int error = 0;
  if (::fsync(fd) != 0) error = errno;
  if (::close(fd) != 0 && error == 0) error = errno;
  return error;
}

// Makes a rename or a new entry in `folder` durable. File systems that cannot
// sync a folder (EINVAL) have nothing more to write.
int sync_folder(const std::string& folder) {
  const int fd = ::open(folder.c_str(), O_RDONLY | O_DIRECTORY | O_CLOEXEC);
  if (fd < 0) return errno;
  int error = 0;
  if (::fsync(fd) != 0 && errno != EINVAL) error = errno;
  ::close(fd);
  return error;
}

int open_new_file(const std::string& path) {
  int fd;
  do fd = ::open(path.c_str(), O_WRONLY | O_CREAT | O_TRUNC | O_CLOEXEC, 0666);
  while (fd < 0 && errno == EINTR);
  return fd;
}

// The process's start time in seconds since the epoch, from /proc; nullopt
// when it cannot be read. A zombie counts as gone: it writes nothing more.
std::optional<double> start_time_of_live_process(pid_t pid) {
  std::ifstream stat("/proc/" + std::to_string(pid) + "/stat");
  std::string text;
  if (!stat || !std::getline(stat, text)) return std::nullopt;
  const auto close = text.rfind(')');
  if (close == std::string::npos) return std::nullopt;
  std::istringstream fields(text.substr(close + 2));
  std::string state;
  fields >> state;
  if (state == "Z" || state == "X") return -1.0;
  std::string skip;
  for (int field = 4; field < 22; ++field) fields >> skip;  // fields 4..21
  unsigned long long ticks = 0;
  if (!(fields >> ticks)) return std::nullopt;
  std::ifstream proc_stat("/proc/stat");
  std::string key;
  long long boot = 0;
  while (proc_stat >> key)
    if (key == "btime" && (proc_stat >> boot)) break;
  if (boot == 0) return std::nullopt;
  return static_cast<double>(boot) + static_cast<double>(ticks) / static_cast<double>(::sysconf(_SC_CLK_TCK));
}

// True when the temporary written last at `modified` may still belong to a
// running process `pid`: that process exists, is not a zombie, and started
// before the temporary was last written (else the number was reused).
bool may_be_in_use(pid_t pid, std::time_t modified) {
  if (pid == ::getpid()) return true;
  if (::kill(pid, 0) != 0 && errno == ESRCH) return false;
  const std::optional<double> started = start_time_of_live_process(pid);
  if (!started) return true;  // alive, age unknown: leave it
  if (*started < 0) return false;
  return *started <= static_cast<double>(modified) + 2.0;  // btime is whole seconds
}

// "<name>.partial-<digits>" -> the digits' pid; 0 when `entry` is not of that form.
pid_t temporary_owner(const std::string& entry, const std::string& name) {
  const std::string prefix = name + kTemporaryMark;
  if (entry.size() <= prefix.size() || entry.compare(0, prefix.size(), prefix) != 0) return 0;
  long long pid = 0;
  for (std::size_t i = prefix.size(); i < entry.size(); ++i) {
    if (entry[i] < '0' || entry[i] > '9' || pid > 1'000'000'000) return 0;
    pid = pid * 10 + (entry[i] - '0');
  }
  return static_cast<pid_t>(pid);
}

// A staging folder of ours holds plain files only (results and their temporaries).
bool holds_only_files(const fs::path& folder) {
  std::error_code ec;
  for (fs::directory_iterator it(folder, ec), end; !ec && it != end; it.increment(ec))
    if (!it->is_regular_file(ec) || it->is_symlink(ec)) return false;
  return !ec;
}

}  // namespace

int remove_stale_temporaries(const std::string& target) {
  const fs::path path(target);
  const std::string name = path.filename().string();
  if (name.empty()) return 0;
  const std::string folder = folder_of(target);
  DIR* dir = ::opendir(folder.c_str());
  if (!dir) return 0;
  std::vector<std::string> candidates;
  while (const dirent* entry = ::readdir(dir))
    if (temporary_owner(entry->d_name, name) > 0) candidates.emplace_back(entry->d_name);
  ::closedir(dir);
  int removed = 0;
  for (const std::string& entry : candidates) {
    const fs::path stale = fs::path(folder) / entry;
    struct stat info {};
    if (::lstat(stale.c_str(), &info) != 0) continue;
    if (may_be_in_use(temporary_owner(entry, name), info.st_mtime)) continue;
    std::error_code ec;
    if (S_ISREG(info.st_mode)) {
      if (fs::remove(stale, ec)) ++removed;
    } else if (S_ISDIR(info.st_mode) && holds_only_files(stale)) {
      if (fs::remove_all(stale, ec) != static_cast<std::uintmax_t>(-1)) ++removed;
    }
  }
  return removed;
}

void write_file_atomically(const std::string& path, const std::string& content, const std::string& shown_as) {
  const std::string& shown = shown_as.empty() ? path : shown_as;
  remove_stale_temporaries(path);
  const std::string temporary = temporary_name(path);
  const int fd = open_new_file(temporary);
  if (fd < 0) fail(shown, "cannot write", errno);
  int error = write_all(fd, content.data(), content.size());
  const int closing = sync_and_close(fd);
  if (error == 0) error = closing;
  if (error != 0) {
    ::unlink(temporary.c_str());
    fail(shown, "cannot write", error);
  }
  if (::rename(temporary.c_str(), path.c_str()) != 0) {
    error = errno;
    ::unlink(temporary.c_str());
    fail(shown, "cannot replace", error);
  }
  sync_folder(folder_of(path));  // the new name is in place; a failure here loses nothing
}

StreamingFile::StreamingFile(const std::string& path, const std::string& shown_as)
    : path_(path), shown_(shown_as.empty() ? path : shown_as), temporary_(temporary_name(path)) {
  remove_stale_temporaries(path);
  fd_ = open_new_file(temporary_);
  if (fd_ < 0) fail(shown_, "cannot write", errno);
}

StreamingFile::~StreamingFile() {
  if (fd_ >= 0) {
    ::close(fd_);
    ::unlink(temporary_.c_str());
  }
}

void StreamingFile::write(const std::string& text) {
  if (fd_ < 0) throw FileError(shown_ + ": cannot write: the file is already closed");
  const int error = write_all(fd_, text.data(), text.size());
  if (error != 0) fail(shown_, "cannot write", error);
}

void StreamingFile::commit() {
  if (fd_ < 0) throw FileError(shown_ + ": cannot write: the file is already closed");
  const int error = sync_and_close(fd_);
  fd_ = -1;
  if (error != 0) {
    ::unlink(temporary_.c_str());
    fail(shown_, "cannot write", error);
  }
  if (::rename(temporary_.c_str(), path_.c_str()) != 0) {
    const int rename_error = errno;
    ::unlink(temporary_.c_str());
    fail(shown_, "cannot replace", rename_error);
  }
  sync_folder(folder_of(path_));
}

ResultFolder::ResultFolder(const std::string& folder, const std::vector<std::string>& names) {
  fs::path path = fs::path(folder).lexically_normal();
  if (!path.empty() && path.filename().empty()) path = path.parent_path();  // "out/" -> "out"
  folder_ = path.string();
  const std::string name = path.filename().string();
  std::error_code ec;
  if (folder_.empty() || name == "." || name == ".." || fs::equivalent(path, fs::current_path(ec), ec))
    throw FileError(folder + ": a run replaces its output folder as a whole; give a folder of its own, e.g. --out " +
                    (fs::path(folder) / "results").lexically_normal().string());
  const fs::path parent = path.parent_path().empty() ? fs::path(".") : path.parent_path();
  fs::create_directories(parent, ec);
  if (ec) throw FileError(folder + ": cannot create its parent folder: " + ec.message());

  struct stat info {};
  if (::lstat(folder_.c_str(), &info) == 0) {
    if (!S_ISDIR(info.st_mode)) throw FileError(folder + ": exists and is not a folder");
    existed_ = true;
    struct stat above {};
    if (::stat(parent.c_str(), &above) == 0 && above.st_dev != info.st_dev)
      throw FileError(folder + ": is a mount point, which cannot be replaced as a whole; give a folder inside it");
    std::vector<std::string> foreign;
    for (fs::directory_iterator it(path, ec), end; !ec && it != end; it.increment(ec)) {
      const std::string entry = it->path().filename().string();
      bool ours = false;
      for (const std::string& n : names)
        ours =
            ours || ((entry == n || temporary_owner(entry, n) > 0) && it->is_regular_file(ec) && !it->is_symlink(ec));
      if (!ours) foreign.push_back(entry);
    }
    if (ec) throw FileError(folder + ": cannot list: " + ec.message());
    if (!foreign.empty()) {
      std::string list;
      for (std::size_t i = 0; i < foreign.size() && i < 3; ++i) list += (i ? ", " : "") + foreign[i];
      if (foreign.size() > 3) list += ", ...";
      throw FileError(folder + ": holds other files than a run's results (" + list +
                      "); a run replaces its output folder as a whole so that its files always belong together: "
                      "give a new or empty folder");
    }
  }
  remove_stale_temporaries(folder_);
  staging_ = temporary_name(folder_);
  fs::remove_all(staging_, ec);  // a stale one of an earlier process with our number
  if (::mkdir(staging_.c_str(), 0777) != 0) fail(folder, "cannot create a folder beside it", errno);
}

ResultFolder::~ResultFolder() {
  if (committed_ || staging_.empty()) return;
  std::error_code ec;
  fs::remove_all(staging_, ec);
}

std::string ResultFolder::staged(const std::string& name) const { return (fs::path(staging_) / name).string(); }

std::string ResultFolder::shown(const std::string& name) const { return (fs::path(folder_) / name).string(); }

void ResultFolder::commit() {
  if (committed_) return;
  const std::string parent = folder_of(folder_);
  int error = sync_folder(staging_);
  if (error != 0) fail(folder_, "cannot write", error);
  bool swapped = false;
  if (::rename(staging_.c_str(), folder_.c_str()) != 0) {
    // An existing folder (ENOTEMPTY/EEXIST) is exchanged with the staging
    // folder in one step; the earlier results then sit at the staging name.
    error = errno;
    if (error != ENOTEMPTY && error != EEXIST) fail(folder_, "cannot put the new results in place", error);
    if (::renameat2(AT_FDCWD, staging_.c_str(), AT_FDCWD, folder_.c_str(), RENAME_EXCHANGE) != 0) {
      error = errno;
      if (error == EINVAL)
        throw FileError(folder_ +
                        ": cannot put the new results in place: this file system cannot exchange two "
                        "folders in one step; give a new folder (it is then created in one step)");
      fail(folder_, "cannot put the new results in place", error);
    }
    swapped = true;
  }
  committed_ = true;
  sync_folder(parent);
  if (swapped) {  // the earlier results; a failure here leaves them for remove_stale_temporaries
    std::error_code ec;
    fs::remove_all(staging_, ec);
  }
}

std::string read_file(const std::string& path) {
  std::error_code ec;
  if (fs::is_directory(path, ec)) throw FileError(path + ": cannot open: it is a folder, not a file");
  std::ifstream in(path, std::ios::binary);
  if (!in) throw FileError(path + ": cannot open: " + std::strerror(errno));
  std::ostringstream buffer;
  buffer << in.rdbuf();
  if (in.bad()) throw FileError(path + ": cannot read");
  return buffer.str();
}

}  // namespace swashtune
