// An editor for every model parameter of the registry: value in the chosen
// display units, default, valid range, meaning; a clear message for a bad
// value; undo and redo. It edits values only; the owner decides what an edit
// does (a live change, a new study).
#pragma once

#include <QString>
#include <QWidget>

#include "display_units.hpp"
#include "swashtune/parameters.hpp"

class QUndoStack;
class QTableWidget;

namespace swashtune::ui {

class ParameterEditor : public QWidget {
  Q_OBJECT
 public:
  explicit ParameterEditor(QWidget* parent = nullptr);
  ~ParameterEditor() override;

  void setUnits(UnitSystem system);
  // Shows these values without recording an undo step (loading a study).
  void setValues(const ModelParameters& values);
  const ModelParameters& values() const;

  // Sets one value (stored units) as if the user had typed it: validated,
  // recorded on the undo stack, parameterEdited emitted. Returns false and
  // emits editRejected with the message when the value is refused.
  bool edit(const QString& key, double stored_value);
  // Parses text typed by a user ("3000 psi", "12", "1.2 L") for a key: a
  // bare number is in the display unit shown in the table. Same result as edit().
  bool editText(const QString& key, const QString& text);

  QUndoStack* undoStack() const;
  // Shares the owner's history: edits are then applied and announced
  // (parameterEdited) without an undo step of the editor's own, so that the
  // owner records every change, from any control, in one place.
  void setUndoStack(QUndoStack* shared);
  QTableWidget* table() const;  // for tests

 signals:
  void parameterEdited(const QString& key, double stored_value);  // after an edit, undo or redo
  void editRejected(const QString& key, const QString& message);

 private:
  struct Impl;
  Impl* d;
};

}  // namespace swashtune::ui
