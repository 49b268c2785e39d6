#include "swashtune/atomic_file.hpp"

#include <unistd.h>

#include <cerrno>
#include <cstdio>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <sstream>

namespace swashtune {

void write_file_atomically(const std::string& path, const std::string& content) {
  const std::string temporary = path + ".partial-" + std::to_string(::getpid());
  {
    std::FILE* f = std::fopen(temporary.c_str(), "wb");
    if (!f) throw FileError(path + ": cannot write: " + std::strerror(errno));
    const bool written = std::fwrite(content.data(), 1, content.size(), f) == content.size();
    const bool flushed = std::fflush(f) == 0 && ::fsync(::fileno(f)) == 0;
    const int saved_errno = errno;
    const bool closed = std::fclose(f) == 0;
    if (!written || !flushed || !closed) {
      std::remove(temporary.c_str());
      throw FileError(path + ": cannot write: " + std::strerror(saved_errno));
    }
  }
  if (std::rename(temporary.c_str(), path.c_str()) != 0) {
    const int saved_errno = errno;
    std::remove(temporary.c_str());
    throw FileError(path + ": cannot replace: " + std::strerror(saved_errno));
  }
}

StreamingFile::StreamingFile(const std::string& path)
    : path_(path), temporary_(path + ".partial-" + std::to_string(::getpid())) {
  file_ = std::fopen(temporary_.c_str(), "wb");
  if (!file_) throw FileError(path + ": cannot write: " + std::strerror(errno));
}

StreamingFile::~StreamingFile() {
  if (file_) {
    std::fclose(file_);
    std::remove(temporary_.c_str());
  }
}

void StreamingFile::write(const std::string& text) {
  if (std::fwrite(text.data(), 1, text.size(), file_) != text.size())
    throw FileError(path_ + ": cannot write: " + std::strerror(errno));
}

void StreamingFile::commit() {
  const bool flushed = std::fflush(file_) == 0 && ::fsync(::fileno(file_)) == 0;
  const int saved_errno = errno;
  const bool closed = std::fclose(file_) == 0;
  file_ = nullptr;
  if (!flushed || !closed || std::rename(temporary_.c_str(), path_.c_str()) != 0) {
    const int error = flushed && closed ? errno : saved_errno;
    std::remove(temporary_.c_str());
    throw FileError(path_ + ": cannot write: " + std::strerror(error));
  }
}

std::string read_file(const std::string& path) {
  std::error_code ec;
  if (std::filesystem::is_directory(path, ec)) throw FileError(path + ": cannot open: it is a folder, not a file");
  std::ifstream in(path, std::ios::binary);
  if (!in) throw FileError(path + ": cannot open: " + std::strerror(errno));
  std::ostringstream buffer;
  buffer << in.rdbuf();
  if (in.bad()) throw FileError(path + ": cannot read");
  return buffer.str();
}

}  // namespace swashtune
