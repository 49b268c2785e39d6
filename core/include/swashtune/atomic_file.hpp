// Writing result files so that a reader never sees half a file and a failed
// write never destroys an earlier good one: write a temporary file beside the
// target, flush it, then rename it over the target.
#pragma once

#include <cstdio>
#include <stdexcept>
#include <string>

namespace swashtune {

class FileError : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

// Replaces `path` with `content` atomically. Throws FileError naming the path.
void write_file_atomically(const std::string& path, const std::string& content);

// A file written piece by piece (a long trace streamed while it is being
// simulated) that appears under its name only when complete: it grows in a
// temporary file beside the target and is renamed by commit(). Destroyed
// without commit(), it removes the temporary and leaves any earlier file alone.
class StreamingFile {
 public:
  explicit StreamingFile(const std::string& path);  // throws FileError
  ~StreamingFile();
  StreamingFile(const StreamingFile&) = delete;
  StreamingFile& operator=(const StreamingFile&) = delete;

  void write(const std::string& text);  // throws FileError
  void commit();                        // flush, sync, rename; throws FileError

 private:
  std::string path_, temporary_;
  std::FILE* file_ = nullptr;
};

// Reads a whole file. Throws FileError naming the path.
std::string read_file(const std::string& path);

}  // namespace swashtune
