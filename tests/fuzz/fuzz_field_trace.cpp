// libFuzzer target: the reader of recorded traces, through its public API
// (read_field_trace on a file: the input is put in an in-memory file and read
// by its /proc/self/fd path). Any input must be read or refused with a
// FieldTraceError; anything else is a finding.
#include <sys/mman.h>
#include <unistd.h>

#include <cstddef>
#include <cstdint>
#include <cstdlib>
#include <string>

#include "swashtune/field_trace.hpp"

namespace {

int memory_file() {
  static const int fd = [] {
    const int f = ::memfd_create("fuzz-trace.csv", 0);
    if (f < 0) std::abort();
    return f;
  }();
  return fd;
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const int fd = memory_file();
  if (::ftruncate(fd, 0) != 0 || ::pwrite(fd, data, size, 0) != static_cast<ssize_t>(size)) std::abort();
  static const std::string path = "/proc/self/fd/" + std::to_string(fd);
  try {
    swashtune::read_field_trace(path);
  } catch (const swashtune::FieldTraceError&) {
  }
  return 0;
}
