// Writing result files so that a reader never sees half a file and a failed
// write never destroys an earlier good one: write a temporary file beside the
// target, flush it, then rename it over the target.
#pragma once

#include <stdexcept>
#include <string>

namespace swashtune {

class FileError : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

// Replaces `path` with `content` atomically. Throws FileError naming the path.
void write_file_atomically(const std::string& path, const std::string& content);

// Reads a whole file. Throws FileError naming the path.
std::string read_file(const std::string& path);

}  // namespace swashtune
