// Where sessions live on disk besides the files a person saves: one autosave
// file per running instance and session, named after the study, locked while
// its instance runs (so a second instance never takes it for a crashed one),
// and the guard that keeps the program from writing over files it must not
// touch (the shipped examples, its own autosave folder, read-only files).
#pragma once

#include <QDateTime>
#include <QString>
#include <memory>
#include <optional>
#include <vector>

#include "swashtune/scenario.hpp"

class QLockFile;

namespace swashtune::ui {

// What an autosave file says about the session it holds.
struct AutosaveInfo {
  QString file;               // the autosave file itself
  QString study_name;         // the study's own name
  QString study_path;         // the file the study was opened from; empty for the built-in demo or a new study
  QString session_path;       // the file the person chose for the session; empty until they did
  QString study_description;  // the study's description as opened
  QDateTime saved_at;         // local time of the autosave
  int changes = 0;            // changes the person made in the session
  double simulated_time = 0.0;
};

class AutosaveStore {
 public:
  // `directory` empty: the application's data folder + "/autosave".
  explicit AutosaveStore(const QString& directory = QString());
  ~AutosaveStore();
  AutosaveStore(const AutosaveStore&) = delete;
  AutosaveStore& operator=(const AutosaveStore&) = delete;

  const QString& directory() const { return directory_; }

  // A new session: this instance's previous autosave file (if any) is
  // removed and the next write goes to a fresh file named after the study.
  void beginSession(const QString& study_name);
  // Continues a recovered session in its own autosave file (locked from now on).
  bool adopt(const QString& file);
  // Writes the session (atomically: the old autosave stays until the new one is complete).
  bool write(const Scenario& session, const AutosaveInfo& info, QString* error = nullptr);
  // Removes this session's autosave file (saved or discarded by the person).
  void discard();
  QString currentFile() const { return file_; }

  // Autosave files whose instance is gone (no live lock), newest first.
  std::vector<AutosaveInfo> orphans() const;
  // Removes an orphan the person chose to discard (only when no instance holds it).
  bool removeOrphan(const QString& file) const;

  static std::optional<AutosaveInfo> readInfo(const QString& file);
  // The file's scenario with the study's own name. Throws ScenarioError.
  static Scenario readSession(const QString& file);

 private:
  QString directory_;
  QString file_;  // empty until the first write of a session
  QString stem_;  // the study's name made safe for a file name
  std::unique_ptr<QLockFile> lock_;
};

// Why the program refuses to write a session over `path`, or nothing when it
// may: the shipped examples are read-only to it, its autosave folder is its
// own, and a file the system marks read-only stays so.
std::optional<QString> refusal_to_write(const QString& path, const QString& autosave_directory);

// The folder of the shipped example scenarios (compiled in), and whether a path lies inside it.
QString examples_directory();
bool is_shipped_example(const QString& path);

}  // namespace swashtune::ui
