// Writing result files so that a reader never sees half a file, never a new
// file beside an old one of the same run, and a failed write never destroys
// an earlier good result:
// - one file: written to "<file>.partial-<pid>" beside the target, flushed to
//   the disk, then renamed over the target;
// - a run's files together (ResultFolder): written into a new folder beside
//   the output folder, which then takes the output folder's place in one
//   atomic exchange (renameat2 RENAME_EXCHANGE).
// A process killed on the way leaves its temporaries; the next write to the
// same place removes them once their process is gone (remove_stale_temporaries).
#pragma once

#include <stdexcept>
#include <string>
#include <vector>

namespace swashtune {

class FileError : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

// Replaces `path` with `content` atomically. Throws FileError naming the path
// (or `shown_as`, when given: the name the user knows the file by).
void write_file_atomically(const std::string& path, const std::string& content, const std::string& shown_as = "");

// A file written piece by piece (a long trace streamed while it is being
// simulated) that appears under its name only when complete: it grows in a
// temporary file beside the target and is renamed by commit(). Destroyed
// without commit(), it removes the temporary and leaves any earlier file alone.
class StreamingFile {
 public:
  explicit StreamingFile(const std::string& path, const std::string& shown_as = "");  // throws FileError
  ~StreamingFile();
  StreamingFile(const StreamingFile&) = delete;
  StreamingFile& operator=(const StreamingFile&) = delete;

  void write(const std::string& text);  // throws FileError
  void commit();                        // write out, sync, rename; throws FileError

 private:
  std::string path_, shown_, temporary_;
  int fd_ = -1;
};

// The files of one run, replaced as a unit: they are written into a staging
// folder "<folder>.partial-<pid>" beside `folder`, and commit() puts the
// staging folder in the place of `folder` in one step, so that a reader sees
// the earlier set or the new one, never a mix, whatever fails or is killed.
//
// Because the whole folder is replaced, an existing `folder` may hold only
// files named in `names` (a run's results); anything else is refused
// (FileError), as are the current folder and a mount point's root.
class ResultFolder {
 public:
  ResultFolder(const std::string& folder, const std::vector<std::string>& names);  // throws FileError
  ~ResultFolder();  // without commit(): removes the staging folder
  ResultFolder(const ResultFolder&) = delete;
  ResultFolder& operator=(const ResultFolder&) = delete;

  // Where to write `name` (one of `names`) before commit().
  std::string staged(const std::string& name) const;
  // How messages should name `name`: "<folder>/<name>".
  std::string shown(const std::string& name) const;
  // Syncs the staging folder and swaps it into place. Throws FileError; the
  // earlier folder is then untouched.
  void commit();

  bool replaced_existing() const { return existed_; }

 private:
  std::string folder_, staging_;
  bool existed_ = false;
  bool committed_ = false;
};

// Removes "<name>.partial-<pid>" files and staging folders beside `target`
// ("<folder>/<name>") that a process of ours left when it was killed: only
// names of exactly that form, only when process <pid> no longer exists (or is
// a later process that has reused the number), and a folder only when it holds
// nothing but plain files. Returns how many were removed; never throws.
int remove_stale_temporaries(const std::string& target);

// Reads a whole file. Throws FileError naming the path.
std::string read_file(const std::string& path);

}  // namespace swashtune
