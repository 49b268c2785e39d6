// LD_PRELOAD shim for the file-safety tests: makes a chosen file-system call
// fail the way a full, broken or read-only disk makes it fail, or kills the
// process at that call, so that every failure path of the file layer runs.
//
//   SWASHTUNE_FAULT="CALL:WHAT:N:TEXT"
//     CALL  open (for writing), write, fsync, close, rename (rename, renameat,
//           renameat2) or mkdir
//     WHAT  an errno name (EIO, ENOSPC, EXDEV, EROFS, EACCES, EDQUOT, EBUSY)
//           or KILL (SIGKILL at that call, as kill -9 would)
//     N     the first matching call to fail (1-based); every later one fails too
//     TEXT  only calls on paths containing TEXT count
//   SWASHTUNE_FAULT_LOG=FILE  appends "CALL PATH" for every call on a path
//           containing TEXT (or on every path when no fault is set), so a test
//           can count the calls it may interrupt.
//
// Only calls made through the dynamic linker are seen: the project's own
// file layer calls open/write/fsync/rename directly for this reason.
#include <dlfcn.h>
#include <fcntl.h>
#include <signal.h>
#include <sys/stat.h>
#include <sys/syscall.h>
#include <unistd.h>

#include <cerrno>
#include <cstdarg>
#include <cstdio>
#include <cstdlib>
#include <cstring>

namespace {

struct Fault {
  bool set = false;
  char call[16] = {};
  int error = 0;  // 0: kill
  long first = 1;
  char text[512] = {};
  long seen = 0;
  int log_fd = -1;
};

Fault& fault() {
  static Fault f = [] {
    Fault f;
    if (const char* log = std::getenv("SWASHTUNE_FAULT_LOG"))
      f.log_fd = static_cast<int>(syscall(SYS_openat, AT_FDCWD, log, O_WRONLY | O_CREAT | O_APPEND | O_CLOEXEC, 0644));
    const char* spec = std::getenv("SWASHTUNE_FAULT");
    if (!spec || !*spec) return f;
    char what[16] = {};
    if (std::sscanf(spec, "%15[^:]:%15[^:]:%ld:%511[^\n]", f.call, what, &f.first, f.text) < 3) return f;
    struct Name {
      const char* name;
      int value;
    };
    static const Name names[] = {{"EIO", EIO},       {"ENOSPC", ENOSPC}, {"EXDEV", EXDEV}, {"EROFS", EROFS},
                                 {"EACCES", EACCES}, {"EDQUOT", EDQUOT}, {"EBUSY", EBUSY}, {"KILL", 0}};
    for (const Name& n : names)
      if (std::strcmp(what, n.name) == 0) {
        f.error = n.value;
        f.set = true;
      }
    return f;
  }();
  return f;
}

bool path_of_fd(int fd, char* out, std::size_t size) {
  char link[64];
  std::snprintf(link, sizeof link, "/proc/self/fd/%d", fd);
  const ssize_t n = readlink(link, out, size - 1);
  if (n <= 0) return false;
  out[n] = '\0';
  return true;
}

void log_call(const char* call, const char* path) {
  Fault& f = fault();
  if (f.log_fd < 0) return;
  char line[1200];
  const int n = std::snprintf(line, sizeof line, "%s %s\n", call, path);
  if (n > 0) syscall(SYS_write, f.log_fd, line, static_cast<std::size_t>(n < 1200 ? n : 1199));
}

// True when this call is to fail (errno is then set); kills for KILL.
bool inject(const char* call, const char* path) {
  Fault& f = fault();
  if (!path) return false;
  if (f.text[0] && !std::strstr(path, f.text)) return false;
  if (!f.set && f.log_fd < 0) return false;
  log_call(call, path);
  if (!f.set || std::strcmp(f.call, call) != 0) return false;
  if (++f.seen < f.first) return false;
  if (f.error == 0) {
    syscall(SYS_kill, syscall(SYS_getpid), SIGKILL);
    for (;;) pause();
  }
  errno = f.error;
  return true;
}

bool inject_fd(const char* call, int fd) {
  char path[1024];
  return path_of_fd(fd, path, sizeof path) && inject(call, path);
}

template <class F>
F next(const char* name) {
  return reinterpret_cast<F>(dlsym(RTLD_NEXT, name));
}

bool writes(int flags) { return (flags & (O_WRONLY | O_RDWR | O_CREAT | O_TRUNC)) != 0; }

}  // namespace

extern "C" {

int open(const char* path, int flags, ...) {
  mode_t mode = 0;
  if (flags & (O_CREAT | O_TMPFILE)) {
    va_list args;
    va_start(args, flags);
    mode = static_cast<mode_t>(va_arg(args, int));
    va_end(args);
  }
  if (writes(flags) && inject("open", path)) return -1;
  static const auto real = next<int (*)(const char*, int, ...)>("open");
  return real(path, flags, mode);
}

int open64(const char* path, int flags, ...) {
  mode_t mode = 0;
  if (flags & (O_CREAT | O_TMPFILE)) {
    va_list args;
    va_start(args, flags);
    mode = static_cast<mode_t>(va_arg(args, int));
    va_end(args);
  }
  if (writes(flags) && inject("open", path)) return -1;
  static const auto real = next<int (*)(const char*, int, ...)>("open64");
  return real(path, flags, mode);
}

ssize_t write(int fd, const void* data, size_t size) {
  if (fd > 2 && inject_fd("write", fd)) return -1;
  static const auto real = next<ssize_t (*)(int, const void*, size_t)>("write");
  return real(fd, data, size);
}

int fsync(int fd) {
  if (inject_fd("fsync", fd)) return -1;
  static const auto real = next<int (*)(int)>("fsync");
  return real(fd);
}

int close(int fd) {
  // The path must be read before the descriptor is gone; a failed close
  // still closes it (as Linux does).
  static const auto real = next<int (*)(int)>("close");
  char path[1024];
  const bool failing = fd > 2 && path_of_fd(fd, path, sizeof path) && inject("close", path);
  const int result = real(fd);
  if (failing) {
    errno = fault().error;
    return -1;
  }
  return result;
}

int rename(const char* from, const char* to) {
  if (inject("rename", to)) return -1;
  static const auto real = next<int (*)(const char*, const char*)>("rename");
  return real(from, to);
}

int renameat(int from_dir, const char* from, int to_dir, const char* to) {
  if (inject("rename", to)) return -1;
  static const auto real = next<int (*)(int, const char*, int, const char*)>("renameat");
  return real(from_dir, from, to_dir, to);
}

int renameat2(int from_dir, const char* from, int to_dir, const char* to, unsigned int flags) {
  if (inject("rename", to)) return -1;
  static const auto real = next<int (*)(int, const char*, int, const char*, unsigned int)>("renameat2");
  return real(from_dir, from, to_dir, to, flags);
}

int mkdir(const char* path, mode_t mode) {
  if (inject("mkdir", path)) return -1;
  static const auto real = next<int (*)(const char*, mode_t)>("mkdir");
  return real(path, mode);
}

}  // extern "C"
