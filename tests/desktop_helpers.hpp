// Shared by the desktop tests: answering the program's questions and file
// dialogs as a person does (clicking the button, typing the file name), and
// small waits. Header-only; every desktop test executable includes it.
#pragma once

#include <QAbstractButton>
#include <QCheckBox>
#include <QStyle>
#include <QStyleOptionButton>
#include <QAbstractItemView>
#include <QApplication>
#include <QCompleter>
#include <QCryptographicHash>
#include <QDir>
#include <QElapsedTimer>
#include <QFile>
#include <QFileDialog>
#include <QLineEdit>
#include <QMessageBox>
#include <QPointer>
#include <QStandardPaths>
#include <QTableWidget>
#include <QTimer>
#include <QtTest>
#include <functional>

#include "main_window.hpp"
#include "parameter_editor.hpp"

namespace desktop_test {

inline const QString demo = QStringLiteral(SWASHTUNE_SOURCE_DIR "/scenarios/valve-slam.toml");
inline const QString under_flow = QStringLiteral(SWASHTUNE_SOURCE_DIR "/scenarios/setting-under-flow.toml");

// A window that asks nothing and writes no autosave (most tests).
inline swashtune::ui::MainWindow::Options quiet() {
  swashtune::ui::MainWindow::Options o;
  o.interactive = false;
  o.autosave = false;
  return o;
}

// A window as a person meets it: questions and autosave, in a folder of the test's.
inline swashtune::ui::MainWindow::Options asking(const QString& autosave_directory) {
  swashtune::ui::MainWindow::Options o;
  o.interactive = true;
  o.autosave = true;
  o.autosave_directory = autosave_directory;
  return o;
}

inline QByteArray file_hash(const QString& path) {
  QFile f(path);
  if (!f.open(QIODevice::ReadOnly)) return {};
  return QCryptographicHash::hash(f.readAll(), QCryptographicHash::Sha256);
}

inline QString button_text(const QAbstractButton* b) { return b->text().remove(QLatin1Char('&')); }

// The answers to the dialogs that will come up, in order. Each is given to
// the modal dialog with that object name when it is the active one.
class Answers : public QObject {
 public:
  struct Answer {
    QString dialog;
    std::function<void(QWidget*)> act;
  };
  explicit Answers(QList<Answer> answers) : pending_(std::move(answers)) {
    connect(&timer_, &QTimer::timeout, this, [this] { poll(); });
    timer_.start(15);
    progress_.start();
  }
  bool done() const { return pending_.isEmpty(); }
  const QStringList& seen() const { return seen_; }  // dialogs answered, in order
  QString lastText() const { return last_text_; }    // the text of the last message box answered

 private:
  // A dialog is named by its object name, or "text:..." for a message box
  // (Qt's own, unnamed) whose text contains the rest.
  static bool matches(QWidget* w, const QString& name) {
    if (name.startsWith(QLatin1String("text:"))) {
      auto* box = qobject_cast<QMessageBox*>(w);
      return box && box->text().contains(name.mid(5));
    }
    return w->objectName() == name;
  }
  void poll() {
    if (pending_.isEmpty()) return;  // re-entered while an answer opens the next dialog: that is fine
    QWidget* w = QApplication::activeModalWidget();
    if (qEnvironmentVariableIsSet("ANSWERS_DEBUG") && w)
      qInfo("modal %s %s (waiting for %s)", w->metaObject()->className(), qPrintable(w->objectName()),
            qPrintable(pending_.front().dialog));
    // A dialog nobody answers would hang the test: give up on it after a while.
    if (w && progress_.elapsed() > 8000) {
      qWarning("no answer for the dialog \"%s\" (expected \"%s\"): closing it", qPrintable(w->objectName()),
               qPrintable(pending_.front().dialog));
      if (auto* dialog = qobject_cast<QDialog*>(w)) dialog->reject();
      progress_.restart();
      return;
    }
    if (!w || !matches(w, pending_.front().dialog) || !w->isVisible()) return;
    progress_.restart();
    const Answer a = pending_.takeFirst();
    seen_ << a.dialog;
    if (auto* box = qobject_cast<QMessageBox*>(w)) last_text_ = box->text();
    // Acted on from the event loop, not from this timer's slot: an answer that
    // opens the next dialog runs its loop there, and this timer keeps firing.
    QPointer<QWidget> target(w);
    QTimer::singleShot(0, this, [target, act = a.act] {
      if (target) act(target);
    });
  }
  QList<Answer> pending_;
  QStringList seen_;
  QString last_text_;
  QTimer timer_;
  QElapsedTimer progress_;
};

// Clicks the button with this text (mnemonics ignored) in the dialog.
inline Answers::Answer click(const QString& dialog, const QString& button) {
  return {dialog, [button](QWidget* w) {
            for (QAbstractButton* b : w->findChildren<QAbstractButton*>())
              if (button_text(b) == button && b->isVisible()) {
                QTest::mouseClick(b, Qt::LeftButton);
                return;
              }
            QFAIL(qPrintable(QStringLiteral("no button \"%1\" in %2").arg(button, w->objectName())));
          }};
}

// Puts a file name into a file dialog's name box and presses Enter, as a person does.
inline Answers::Answer type_file(const QString& dialog, const QString& path) {
  return {dialog, [path](QWidget* w) {
            auto* edit = w->findChild<QLineEdit*>(QStringLiteral("fileNameEdit"));
            QVERIFY(edit);
            // The name as typed (keystroke by keystroke the dialog's inline
            // completion would rewrite it), then Enter.
            edit->setText(path);
            QTest::keyClick(edit, Qt::Key_Return);
          }};
}

// Presses Enter in a file dialog: takes the name it suggests.
inline Answers::Answer accept_suggestion(const QString& dialog, QString* suggested = nullptr) {
  return {dialog, [suggested](QWidget* w) {
            auto* edit = w->findChild<QLineEdit*>(QStringLiteral("fileNameEdit"));
            QVERIFY(edit);
            if (suggested) {
              auto* fd = qobject_cast<QFileDialog*>(w);
              *suggested = fd ? QDir(fd->directory()).filePath(edit->text()) : edit->text();
            }
            QTest::keyClick(edit, Qt::Key_Return);
          }};
}

// Reads the file a dialog suggests, then closes it as a person who changed their mind.
inline Answers::Answer read_suggestion_and_cancel(const QString& dialog, QString* suggested) {
  return {dialog, [suggested](QWidget* w) {
            auto* fd = qobject_cast<QFileDialog*>(w);
            auto* edit = w->findChild<QLineEdit*>(QStringLiteral("fileNameEdit"));
            if (fd && edit) *suggested = QDir(fd->directory()).filePath(edit->text());
            QTest::keyClick(w, Qt::Key_Escape);
          }};
}

inline Answers::Answer escape(const QString& dialog) {
  return {dialog, [](QWidget* w) { QTest::keyClick(w, Qt::Key_Escape); }};
}

// Shows the window and makes it the active one, so its shortcuts work.
inline bool show_active(QWidget& w) {
  w.show();
  w.activateWindow();
  return QTest::qWaitForWindowExposed(&w);
}

// A shortcut pressed in the window, as a person does after a dialog closed
// (the window is active again first: shortcuts act in the active window).
inline void press(QWidget& w, Qt::Key key, Qt::KeyboardModifiers modifiers = Qt::ControlModifier) {
  w.activateWindow();
  QApplication::setActiveWindow(&w);
  QTest::keyClick(&w, key, modifiers);
}

// Clicks a check box on its box, where a person clicks it.
inline void click_box(QCheckBox* box) {
  QStyleOptionButton option;
  option.initFrom(box);
  const QRect indicator = box->style()->subElementRect(QStyle::SE_CheckBoxIndicator, &option, box);
  QTest::mouseClick(box, Qt::LeftButton, Qt::NoModifier, indicator.center());
}

// Types a value into a spin box as a person does: select, type, Enter.
template <class Box>
void type_into(Box* box, const QString& text) {
  box->setFocus();
  box->selectAll();
  QTest::keyClicks(box, text);
  QTest::keyClick(box, Qt::Key_Return);
}

// Edits a value in the Parameters table as a person does: double-click the
// cell, type, Enter. False when the row is not there.
inline bool edit_parameter_cell(swashtune::ui::ParameterEditor* editor, const QString& key, const QString& text) {
  QTableWidget* table = editor->table();
  for (int row = 0; row < table->rowCount(); ++row) {
    QTableWidgetItem* name = table->item(row, 0);
    if (!name || name->text() != key) continue;
    QTableWidgetItem* value = table->item(row, 2);
    table->scrollToItem(value);
    const QPoint centre = table->visualItemRect(value).center();
    QTest::mouseClick(table->viewport(), Qt::LeftButton, Qt::NoModifier, centre);
    QTest::mouseDClick(table->viewport(), Qt::LeftButton, Qt::NoModifier, centre);
    // The cell's editor: a line edit inside the table.
    QLineEdit* edit = nullptr;
    for (QLineEdit* e : table->viewport()->findChildren<QLineEdit*>())
      if (e->isVisible()) edit = e;
    if (!edit) return false;
    edit->selectAll();
    QTest::keyClicks(edit, text);
    QTest::keyClick(edit, Qt::Key_Return);
    QTest::qWait(20);  // the table commits the edit from the event loop
    return true;
  }
  return false;
}

}  // namespace desktop_test
