#include "session_store.hpp"

#include <QCoreApplication>
#include <QDir>
#include <QFile>
#include <QFileInfo>
#include <QLockFile>
#include <QRegularExpression>
#include <QStandardPaths>
#include <QUrl>
#include <algorithm>
#include <atomic>

#include "swashtune/atomic_file.hpp"

namespace swashtune::ui {
namespace {

const QString kMagic = QStringLiteral("# swashtune-autosave: 1");

// Header lines are "# key: value" with the value percent-encoded, so a path
// or a description with line breaks stays on its line.
QString header_line(const QString& key, const QString& value) {
  return QStringLiteral("# %1: %2\n").arg(key, QString::fromLatin1(QUrl::toPercentEncoding(value)));
}

QString safe_stem(const QString& name) {
  QString stem = name.trimmed();
  stem.replace(QRegularExpression(QStringLiteral("[^A-Za-z0-9._-]+")), QStringLiteral("-"));
  stem.remove(QRegularExpression(QStringLiteral("^[-.]+|[-.]+$")));
  if (stem.isEmpty()) stem = QStringLiteral("session");
  return stem.left(48);
}

std::unique_ptr<QLockFile> make_lock(const QString& file) {
  auto lock = std::make_unique<QLockFile>(file + QStringLiteral(".lock"));
  // Only a dead owner makes a lock stale, never its age: a session may stay
  // open for days.
  lock->setStaleLockTime(0);
  return lock;
}

std::atomic<int> sessions_begun{0};  // per process: several windows, several sessions

}  // namespace

AutosaveStore::AutosaveStore(const QString& directory)
    : directory_(directory.isEmpty()
                     ? QStandardPaths::writableLocation(QStandardPaths::AppDataLocation) + QStringLiteral("/autosave")
                     : directory) {
  QDir().mkpath(directory_);
  directory_ = QDir(directory_).canonicalPath().isEmpty() ? directory_ : QDir(directory_).canonicalPath();
}

AutosaveStore::~AutosaveStore() = default;  // the lock goes with it; the file stays for recovery

void AutosaveStore::beginSession(const QString& study_name) {
  discard();
  stem_ = safe_stem(study_name);
}

bool AutosaveStore::adopt(const QString& file) {
  auto lock = make_lock(file);
  if (!lock->tryLock(0)) return false;  // another instance took it meanwhile
  discard();
  lock_ = std::move(lock);
  file_ = file;
  return true;
}

bool AutosaveStore::write(const Scenario& session, const AutosaveInfo& info, QString* error) {
  if (file_.isEmpty()) {
    const QString name = QStringLiteral("%1.%2.p%3.s%4.toml")
                             .arg(stem_.isEmpty() ? safe_stem(info.study_name) : stem_)
                             .arg(QDateTime::currentDateTime().toString(QStringLiteral("yyyyMMdd-HHmmss")))
                             .arg(QCoreApplication::applicationPid())
                             .arg(++sessions_begun);
    auto lock = make_lock(directory_ + QLatin1Char('/') + name);
    if (!lock->tryLock(0)) {
      if (error) *error = QStringLiteral("%1: cannot lock the autosave file").arg(name);
      return false;
    }
    lock_ = std::move(lock);
    file_ = directory_ + QLatin1Char('/') + name;
  }
  QString text = kMagic + QLatin1Char('\n');
  text += QStringLiteral(
      "# Swashtune keeps this copy of a live session and offers it back if the program stops "
      "without closing it.\n");
  text += header_line(QStringLiteral("study-name"), info.study_name);
  text += header_line(QStringLiteral("study-path"), info.study_path);
  text += header_line(QStringLiteral("session-path"), info.session_path);
  text += header_line(QStringLiteral("study-description"), info.study_description);
  text += header_line(QStringLiteral("saved-at"), QDateTime::currentDateTime().toString(Qt::ISODate));
  text += header_line(QStringLiteral("changes"), QString::number(info.changes));
  text += header_line(QStringLiteral("simulated-time"), QString::number(info.simulated_time, 'g', 17));
  try {
    write_file_atomically(file_.toStdString(), text.toStdString() + scenario_to_toml(session));
    return true;
  } catch (const std::exception& e) {
    if (error) *error = QString::fromStdString(e.what());
    return false;
  }
}

void AutosaveStore::discard() {
  if (!file_.isEmpty()) QFile::remove(file_);
  file_.clear();
  lock_.reset();  // unlocks and removes the lock file
}

std::vector<AutosaveInfo> AutosaveStore::orphans() const {
  std::vector<AutosaveInfo> found;
  const QFileInfoList files =
      QDir(directory_).entryInfoList({QStringLiteral("*.toml")}, QDir::Files, QDir::Time);  // newest first
  for (const QFileInfo& f : files) {
    const QString path = f.absoluteFilePath();
    if (path == file_) continue;  // our own
    auto lock = make_lock(path);
    if (!lock->tryLock(0)) continue;  // its instance is still running
    lock->unlock();
    if (auto info = readInfo(path)) found.push_back(*info);
  }
  std::stable_sort(found.begin(), found.end(),
                   [](const AutosaveInfo& a, const AutosaveInfo& b) { return a.saved_at > b.saved_at; });
  return found;
}

bool AutosaveStore::removeOrphan(const QString& file) const {
  auto lock = make_lock(file);
  if (!lock->tryLock(0)) return false;
  const bool removed = QFile::remove(file);
  lock->unlock();
  return removed;
}

std::optional<AutosaveInfo> AutosaveStore::readInfo(const QString& file) {
  QFile f(file);
  if (!f.open(QIODevice::ReadOnly | QIODevice::Text)) return std::nullopt;
  if (QString::fromUtf8(f.readLine()).trimmed() != kMagic) return std::nullopt;
  AutosaveInfo info;
  info.file = QFileInfo(file).absoluteFilePath();
  while (!f.atEnd()) {
    const QString line = QString::fromUtf8(f.readLine()).trimmed();
    if (!line.startsWith(QLatin1String("# "))) break;
    const int colon = line.indexOf(QStringLiteral(": "));
    if (colon < 0) continue;
    const QString key = line.mid(2, colon - 2);
    const QString value = QUrl::fromPercentEncoding(line.mid(colon + 2).toLatin1());
    if (key == QLatin1String("study-name"))
      info.study_name = value;
    else if (key == QLatin1String("study-path"))
      info.study_path = value;
    else if (key == QLatin1String("session-path"))
      info.session_path = value;
    else if (key == QLatin1String("study-description"))
      info.study_description = value;
    else if (key == QLatin1String("saved-at"))
      info.saved_at = QDateTime::fromString(value, Qt::ISODate);
    else if (key == QLatin1String("changes"))
      info.changes = value.toInt();
    else if (key == QLatin1String("simulated-time"))
      info.simulated_time = value.toDouble();
  }
  if (!info.saved_at.isValid()) info.saved_at = QFileInfo(file).lastModified();
  return info;
}

Scenario AutosaveStore::readSession(const QString& file) {
  Scenario s = load_scenario(file.toStdString());
  if (const auto info = readInfo(file); info && !info->study_name.isEmpty()) s.name = info->study_name.toStdString();
  return s;
}

QString examples_directory() {
#ifdef SWASHTUNE_EXAMPLES_DIR
  return QStringLiteral(SWASHTUNE_EXAMPLES_DIR);
#else
  return QString();
#endif
}

namespace {

// Canonical when the file exists, else its folder's canonical path plus the name.
QString canonical(const QString& path) {
  const QFileInfo info(path);
  if (info.exists()) return info.canonicalFilePath();
  const QString dir = info.absoluteDir().canonicalPath();
  return dir.isEmpty() ? info.absoluteFilePath() : dir + QLatin1Char('/') + info.fileName();
}

bool inside(const QString& path, const QString& directory) {
  if (directory.isEmpty()) return false;
  const QString dir = QDir(directory).canonicalPath();
  if (dir.isEmpty()) return false;
  return canonical(path).startsWith(dir + QLatin1Char('/'));
}

}  // namespace

bool is_shipped_example(const QString& path) {
  return path.startsWith(QLatin1String(":/")) || inside(path, examples_directory());
}

std::optional<QString> refusal_to_write(const QString& path, const QString& autosave_directory) {
  const QString name = QFileInfo(path).fileName();
  if (is_shipped_example(path))
    return QStringLiteral(
               "%1 is one of the examples shipped with Swashtune, which the program never changes. "
               "Save the session under another name or in another folder.")
        .arg(name);
  if (inside(path, autosave_directory))
    return QStringLiteral(
               "%1 is in Swashtune's autosave folder (%2), which the program manages itself. "
               "Save the session somewhere else.")
        .arg(name, autosave_directory);
  const QFileInfo info(path);
  if (info.exists() && !info.isWritable())
    return QStringLiteral("%1 is read-only. Save the session under another name.").arg(name);
  if (info.isDir()) return QStringLiteral("%1 is a folder, not a file.").arg(name);
  return std::nullopt;
}

}  // namespace swashtune::ui
