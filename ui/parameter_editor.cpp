#include "parameter_editor.hpp"

#include <QAction>
#include <QColor>
#include <QEvent>
#include <QFont>
#include <QHeaderView>
#include <QLabel>
#include <QMenu>
#include <QPalette>
#include <QScopedValueRollback>
#include <QTableWidget>
#include <QUndoCommand>
#include <QUndoStack>
#include <QVBoxLayout>
#include <algorithm>
#include <cmath>
#include <exception>
#include <functional>
#include <map>
#include <optional>
#include <string>
#include <string_view>
#include <utility>

#include "qt_text.hpp"
#include "swashtune/units.hpp"

namespace swashtune::ui {
namespace {

enum Column { kKey, kSymbol, kValue, kUnit, kDefault, kRange, kMeaning, kColumnCount };

constexpr int kKeyRole = Qt::UserRole;        // the row's parameter key; empty on heading rows
constexpr int kShownRole = Qt::UserRole + 1;  // text last written into a value cell by the editor

std::string_view section_of(std::string_view key) { return key.substr(0, key.find('.')); }

QString section_title(std::string_view section) {
  // The registry's sections, named as a reader of the model would say them.
  static const std::pair<std::string_view, const char*> titles[] = {
      {"fluid", "Fluid"},
      {"pump", "Pump"},
      {"bias_spring", "Bias spring"},
      {"control_piston", "Control piston"},
      {"compensator", "Compensator"},
      {"line", "Discharge line"},
      {"load", "Load valve"},
      {"solver", "Solver numerics"},
  };
  for (const auto& [name, title] : titles)
    if (name == section) return QString::fromLatin1(title);
  QString fallback = qs(section).replace(QLatin1Char('_'), QLatin1Char(' '));
  if (!fallback.isEmpty()) fallback[0] = fallback[0].toUpper();
  return fallback;
}

// Seven significant digits: enough to read back what was typed, short enough
// to scan a column.
QString format_number(double v) {
  if (v == 0.0) v = 0.0;  // no "-0"
  return QString::number(v, 'g', 7);
}

QString flag_text(bool on) { return on ? QStringLiteral("on") : QStringLiteral("off"); }

// Unit round trips (deg -> rad -> deg) leave the last bit or two unequal; such
// a value is still the default and must not show as changed.
bool same_value(double a, double b) { return a == b || std::abs(a - b) <= 1e-12 * std::max(std::abs(a), std::abs(b)); }

// Range::describe's wording, with the bounds converted into the shown unit.
QString range_text(const Range& r, const DisplayQuantity& shown) {
  const QString unit = shown.unit.isEmpty() ? QString() : QLatin1Char(' ') + shown.unit;
  const QString lo =
      (r.min_open ? QStringLiteral("> ") : QStringLiteral(">= ")) + format_number(shown.to_display(r.min)) + unit;
  if (std::isinf(r.max)) return lo;
  const QString hi =
      (r.max_open ? QStringLiteral("< ") : QStringLiteral("<= ")) + format_number(shown.to_display(r.max)) + unit;
  return lo + QStringLiteral(" and ") + hi;
}

std::optional<bool> parse_flag_word(const QString& text) {
  const QString t = text.trimmed().toLower();
  if (t == QLatin1String("on") || t == QLatin1String("true") || t == QLatin1String("yes")) return true;
  if (t == QLatin1String("off") || t == QLatin1String("false") || t == QLatin1String("no")) return false;
  return std::nullopt;
}

// A warning colour that reads on the current palette: a red whose lightness
// is the opposite of the window's, so it also works on a dark theme.
QColor warning_colour(const QPalette& palette) {
  const bool dark_window = palette.color(QPalette::Window).lightness() < 128;
  return dark_window ? QColor(255, 128, 112) : QColor(176, 32, 16);
}

// One accepted change of one parameter. The editor applies the values; the
// command only remembers them.
class SetParameterCommand : public QUndoCommand {
 public:
  using Apply = std::function<void(const ParameterSpec&, double)>;
  SetParameterCommand(Apply apply, const ParameterSpec& spec, double before, double after, const QString& text)
      : apply_(std::move(apply)), spec_(spec), before_(before), after_(after) {
    setText(text);
  }
  void undo() override { apply_(spec_, before_); }
  void redo() override { apply_(spec_, after_); }

 private:
  Apply apply_;
  const ParameterSpec& spec_;  // registry entries live for the whole program
  double before_;
  double after_;
};

// Calls back on palette or style changes, which need colours recomputed.
class PaletteWatcher : public QObject {
 public:
  PaletteWatcher(QObject* parent, std::function<void()> on_change)
      : QObject(parent), on_change_(std::move(on_change)) {}
  bool eventFilter(QObject* watched, QEvent* event) override {
    const QEvent::Type t = event->type();
    if (t == QEvent::PaletteChange || t == QEvent::ApplicationPaletteChange || t == QEvent::StyleChange) on_change_();
    return QObject::eventFilter(watched, event);
  }

 private:
  std::function<void()> on_change_;
};

}  // namespace

struct ParameterEditor::Impl {
  ParameterEditor* q;
  ModelParameters values = default_parameters();
  UnitSystem system = UnitSystem::metric;
  QTableWidget* table = nullptr;
  QLabel* message = nullptr;
  QUndoStack* stack = nullptr;
  QObject* watcher = nullptr;                      // recolours on palette changes
  std::map<std::string, int, std::less<>> row_of;  // key -> table row
  std::vector<int> heading_rows;
  bool writing = false;  // the editor itself is writing cells: not a user edit
  bool own_history = true;  // false: the owner's shared stack records the changes

  explicit Impl(ParameterEditor* owner) : q(owner) {}

  DisplayQuantity display(const ParameterSpec& spec) const {
    try {
      return parameter_display(spec, system);
    } catch (const std::exception&) {
      return DisplayQuantity{qs(spec.unit == "-" ? std::string_view() : spec.unit),
                             1.0};  // a registry unit core cannot read
    }
  }

  // A value as the table shows it: "180 bar", "on", "0.7".
  QString shown(const ParameterSpec& spec, double stored) const {
    if (spec.is_flag() && (stored == 0.0 || stored == 1.0)) return flag_text(stored != 0.0);
    if (spec.is_choice())
      if (const auto word = spec.word_for(stored))
        return QString::fromUtf8(word->data(), static_cast<int>(word->size()));
    const DisplayQuantity d = display(spec);
    const QString number = format_number(d.to_display(stored));
    return d.unit.isEmpty() ? number : number + QLatin1Char(' ') + d.unit;
  }

  void build();
  void refresh_row(const ParameterSpec& spec);
  void refresh_all();
  // Every column but the meaning fits its contents; the meaning takes what is
  // left (its full text is in the tooltip).
  void fit_columns() {
    for (int column = 0; column < kMeaning; ++column) table->resizeColumnToContents(column);
  }
  void update_colours();
  std::optional<QString> refusal(const ParameterSpec& spec, double value, const QString& got) const;
  bool submit(const QString& key, const ParameterSpec& spec, double value, const QString& got,
              const QString& undo_text);
  void apply(const ParameterSpec& spec, double value);
  void reject(const QString& key, const ParameterSpec* spec, const QString& text);
  void on_item_changed(QTableWidgetItem* item);
  void show_context_menu(const QPoint& pos);
};

void ParameterEditor::Impl::build() {
  table->setColumnCount(kColumnCount);
  table->setHorizontalHeaderLabels({ParameterEditor::tr("Parameter"), ParameterEditor::tr("Symbol"),
                                    ParameterEditor::tr("Value"), ParameterEditor::tr("Unit"),
                                    ParameterEditor::tr("Default"), ParameterEditor::tr("Valid range"),
                                    ParameterEditor::tr("Meaning")});
  table->horizontalHeaderItem(kValue)->setToolTip(ParameterEditor::tr(
      "Double-click to edit. Type a number in the unit shown, or a value with its unit (e.g. 3000 psi)."));

  const auto& registry = parameter_registry();
  std::string_view last_section;
  for (const ParameterSpec& spec : registry) {
    const std::string_view section = section_of(spec.key);
    if (section != last_section) {
      last_section = section;
      const int row = table->rowCount();
      table->insertRow(row);
      auto* heading = new QTableWidgetItem(section_title(section));
      heading->setFlags(Qt::ItemIsEnabled);
      QFont font = heading->font();
      font.setBold(true);
      heading->setFont(font);
      table->setItem(row, 0, heading);
      table->setSpan(row, 0, 1, kColumnCount);
      heading_rows.push_back(row);
    }

    const int row = table->rowCount();
    table->insertRow(row);
    row_of.emplace(std::string(spec.key), row);
    const QString key = qs(spec.key);
    const QString meaning = qs(spec.meaning);
    for (int column = 0; column < kColumnCount; ++column) {
      auto* item = new QTableWidgetItem;
      item->setData(kKeyRole, key);
      Qt::ItemFlags flags = Qt::ItemIsEnabled | Qt::ItemIsSelectable;
      if (column == kValue) flags |= spec.is_flag() ? Qt::ItemIsUserCheckable : Qt::ItemIsEditable;
      item->setFlags(flags);
      if (column == kValue || column == kDefault) item->setTextAlignment(Qt::AlignRight | Qt::AlignVCenter);
      table->setItem(row, column, item);
    }
    table->item(row, kKey)->setText(key);
    table->item(row, kKey)->setToolTip(meaning);
    table->item(row, kSymbol)->setText(qs(spec.symbol));
    table->item(row, kMeaning)->setText(meaning);
    table->item(row, kMeaning)->setToolTip(meaning);
  }
  refresh_all();
  update_colours();
}

void ParameterEditor::Impl::refresh_row(const ParameterSpec& spec) {
  const auto found = row_of.find(spec.key);
  if (found == row_of.end()) return;
  const int row = found->second;
  const QScopedValueRollback<bool> guard(writing, true);

  const DisplayQuantity d = display(spec);
  const double value = spec.get(values);
  const bool changed = !same_value(value, spec.default_value);
  const QString stored_unit = spec.unit == "-" ? QString() : QLatin1Char(' ') + qs(spec.unit);

  QTableWidgetItem* value_item = table->item(row, kValue);
  if (spec.is_flag()) {
    value_item->setCheckState(value != 0.0 ? Qt::Checked : Qt::Unchecked);
    value_item->setText(flag_text(value != 0.0));
    value_item->setTextAlignment(Qt::AlignLeft | Qt::AlignVCenter);
    table->item(row, kDefault)->setText(flag_text(spec.default_value != 0.0));
    table->item(row, kRange)->setText(ParameterEditor::tr("on or off"));
    value_item->setToolTip(ParameterEditor::tr("Click the box to switch it on or off."));
  } else {
    const QString text = format_number(d.to_display(value));
    value_item->setText(text);
    value_item->setData(kShownRole, text);
    table->item(row, kDefault)->setText(format_number(d.to_display(spec.default_value)));
    table->item(row, kRange)->setText(range_text(spec.range, d));
    value_item->setToolTip(ParameterEditor::tr("Stored as %1%2. Type a number in %3, or a value with its unit.")
                               .arg(QString::number(value, 'g', 12), stored_unit,
                                    d.unit.isEmpty() ? ParameterEditor::tr("plain numbers") : d.unit));
  }
  table->item(row, kUnit)->setText(spec.is_flag() ? QString() : d.unit);
  table->item(row, kRange)
      ->setToolTip(ParameterEditor::tr("In stored units: %1").arg(qs(spec.range.describe(spec.unit))));

  // Bold marks what differs from the registry's default.
  for (const int column : {kKey, kValue}) {
    QTableWidgetItem* item = table->item(row, column);
    QFont font = item->font();
    font.setBold(changed);
    item->setFont(font);
  }
}

void ParameterEditor::Impl::refresh_all() {
  for (const ParameterSpec& spec : parameter_registry()) refresh_row(spec);
}

void ParameterEditor::Impl::update_colours() {
  const QPalette palette = q->palette();
  QPalette message_palette = message->palette();
  message_palette.setColor(QPalette::WindowText, warning_colour(palette));
  message->setPalette(message_palette);
  const QScopedValueRollback<bool> guard(writing, true);
  for (const int row : heading_rows) table->item(row, 0)->setBackground(palette.brush(QPalette::AlternateBase));
}

// The reason a value is refused, or nothing when it may be applied.
std::optional<QString> ParameterEditor::Impl::refusal(const ParameterSpec& spec, double value,
                                                      const QString& got) const {
  const QString key = qs(spec.key);
  if (spec.is_flag()) {
    if (value != 0.0 && value != 1.0) return key + QStringLiteral(": expected on or off (1 or 0), got ") + got;
    return std::nullopt;
  }
  if (!std::isfinite(value)) return key + QStringLiteral(": expected a finite number, got ") + got;
  if (!spec.range.contains(value))
    return key + QStringLiteral(": must be ") + qs(spec.range.describe(spec.unit)) + QStringLiteral(", got ") + got;

  // Relations between parameters. Only problems this edit adds count, so a
  // loaded set that is already inconsistent can still be repaired.
  ModelParameters candidate = values;
  spec.set(candidate, value);
  const std::vector<std::string> before = check_consistency(values);
  const std::vector<std::string> after = check_consistency(candidate);
  if (after.size() > before.size()) {
    QString text = key + QStringLiteral(": ");
    for (std::size_t i = 0; i < after.size(); ++i) text += (i ? QStringLiteral("; ") : QString()) + qs(after[i]);
    return text;
  }
  return std::nullopt;
}

bool ParameterEditor::Impl::submit(const QString& key, const ParameterSpec& spec, double value, const QString& got,
                                   const QString& undo_text) {
  if (const std::optional<QString> problem = refusal(spec, value, got)) {
    reject(key, &spec, *problem);
    return false;
  }
  message->clear();
  const double before = spec.get(values);
  if (before == value) {
    refresh_row(spec);  // the cell may hold the same value typed differently
    return true;
  }
  if (!own_history) {
    apply(spec, value);
    return true;
  }
  // push() runs redo(), which applies the value and emits parameterEdited.
  stack->push(new SetParameterCommand([this](const ParameterSpec& s, double v) { apply(s, v); }, spec, before, value,
                                      undo_text));
  return true;
}

void ParameterEditor::Impl::apply(const ParameterSpec& spec, double value) {
  spec.set(values, value);
  refresh_row(spec);
  message->clear();
  if (const auto found = row_of.find(spec.key); found != row_of.end())
    table->scrollToItem(table->item(found->second, kValue));
  emit q->parameterEdited(qs(spec.key), spec.get(values));
}

void ParameterEditor::Impl::reject(const QString& key, const ParameterSpec* spec, const QString& text) {
  if (spec) refresh_row(*spec);  // put the cell back to the value in force
  message->setText(text);
  emit q->editRejected(key, text);
}

void ParameterEditor::Impl::on_item_changed(QTableWidgetItem* item) {
  if (writing || item->column() != kValue) return;
  const QString key = item->data(kKeyRole).toString();
  const ParameterSpec* spec = find_parameter(key.toStdString());
  if (!spec) return;
  if (spec->is_flag()) {
    const bool on = item->checkState() == Qt::Checked;
    if (on != (spec->get(values) != 0.0)) q->edit(key, on ? 1.0 : 0.0);
    return;
  }
  if (item->text() == item->data(kShownRole).toString()) return;  // opened and closed unchanged
  q->editText(key, item->text());
}

void ParameterEditor::Impl::show_context_menu(const QPoint& pos) {
  const QTableWidgetItem* item = table->itemAt(pos);
  if (!item) return;
  const QString key = item->data(kKeyRole).toString();
  const ParameterSpec* spec = find_parameter(key.toStdString());
  if (!spec) return;

  QMenu menu(table);
  QAction* reset =
      menu.addAction(ParameterEditor::tr("Reset %1 to default (%2)").arg(key, shown(*spec, spec->default_value)));
  reset->setEnabled(!same_value(spec->get(values), spec->default_value));
  QObject::connect(reset, &QAction::triggered, q, [this, key, spec] {
    submit(key, *spec, spec->default_value, shown(*spec, spec->default_value),
           ParameterEditor::tr("Reset %1 to default").arg(key));
  });
  menu.addSeparator();
  menu.addAction(stack->createUndoAction(&menu));
  menu.addAction(stack->createRedoAction(&menu));
  menu.exec(table->viewport()->mapToGlobal(pos));
}

ParameterEditor::ParameterEditor(QWidget* parent) : QWidget(parent), d(new Impl(this)) {
  d->stack = new QUndoStack(this);
  d->table = new QTableWidget(this);
  d->message = new QLabel(this);
  d->message->setObjectName(QStringLiteral("message"));
  d->message->setWordWrap(true);
  d->message->setTextInteractionFlags(Qt::TextSelectableByMouse);

  QTableWidget* t = d->table;
  t->verticalHeader()->hide();
  t->verticalHeader()->setDefaultSectionSize(t->fontMetrics().height() + 8);  // a dense list, not a form
  t->setSelectionBehavior(QAbstractItemView::SelectRows);
  t->setSelectionMode(QAbstractItemView::SingleSelection);
  t->setEditTriggers(QAbstractItemView::DoubleClicked | QAbstractItemView::EditKeyPressed |
                     QAbstractItemView::AnyKeyPressed);
  t->setWordWrap(false);
  t->setContextMenuPolicy(Qt::CustomContextMenu);
  t->horizontalHeader()->setStretchLastSection(true);
  t->horizontalHeader()->setHighlightSections(false);
  d->build();
  d->fit_columns();

  connect(t, &QTableWidget::itemChanged, this, [this](QTableWidgetItem* item) { d->on_item_changed(item); });
  connect(t, &QTableWidget::customContextMenuRequested, this, [this](const QPoint& pos) { d->show_context_menu(pos); });
  // A double-click anywhere on a row edits its value: the row is the target.
  connect(t, &QTableWidget::cellDoubleClicked, this, [this](int row, int column) {
    QTableWidgetItem* value = d->table->item(row, kValue);
    if (column != kValue && value && (value->flags() & Qt::ItemIsEditable)) d->table->editItem(value);
  });
  d->watcher = new PaletteWatcher(this, [this] { d->update_colours(); });
  installEventFilter(d->watcher);

  auto* layout = new QVBoxLayout(this);
  layout->setContentsMargins(0, 0, 0, 0);
  layout->addWidget(t, 1);
  layout->addWidget(d->message);
  d->message->setContentsMargins(4, 2, 4, 2);
}

ParameterEditor::~ParameterEditor() {
  // Children outlive Impl by a moment: keep their signals away from it.
  d->table->disconnect(this);
  removeEventFilter(d->watcher);
  delete d;
  d = nullptr;
}

void ParameterEditor::setUnits(UnitSystem system) {
  d->system = system;
  d->refresh_all();
  d->fit_columns();
}

void ParameterEditor::setValues(const ModelParameters& values) {
  // Only the rows that changed: this runs at display rate while a ramp moves a value.
  const ModelParameters before = d->values;
  d->values = values;
  for (const ParameterSpec& spec : parameter_registry())
    if (spec.get(before) != spec.get(values)) d->refresh_row(spec);
}

const ModelParameters& ParameterEditor::values() const { return d->values; }

bool ParameterEditor::edit(const QString& key, double stored_value) {
  const ParameterSpec* spec = find_parameter(key.toStdString());
  if (!spec) {
    d->reject(key, nullptr, key + QStringLiteral(": no such parameter"));
    return false;
  }
  const QString text = d->shown(*spec, stored_value);
  return d->submit(key, *spec, stored_value, text, tr("Set %1 to %2").arg(key, text));
}

bool ParameterEditor::editText(const QString& key, const QString& text) {
  const ParameterSpec* spec = find_parameter(key.toStdString());
  if (!spec) {
    d->reject(key, nullptr, key + QStringLiteral(": no such parameter"));
    return false;
  }
  const QString typed = text.trimmed();
  if (spec->is_flag()) {
    if (const std::optional<bool> on = parse_flag_word(typed))
      return d->submit(key, *spec, *on ? 1.0 : 0.0, typed, tr("Set %1 to %2").arg(key, flag_text(*on)));
  }

  if (const auto word = spec->value_of_word(typed.toStdString()))
    return d->submit(key, *spec, *word, typed, tr("Set %1 to %2").arg(key, typed));
  if (spec->is_choice()) {
    d->reject(key, spec,
              key + QStringLiteral(": expected %1, got \"%2\"").arg(QString::fromStdString(spec->choices_text()), typed));
    return false;
  }

  double value = 0.0;
  QString got = typed;  // as the user wrote it, with the implied unit made visible
  try {
    const std::string utf8 = typed.toStdString();
    const Quantity q = parse_quantity(utf8);
    if (q.has_unit) {
      value = convert_to(utf8, spec->unit);
    } else {
      // A bare number is in the shown unit; convert() keeps it to one rounding.
      const DisplayQuantity shown = d->display(*spec);
      value = shown.unit.isEmpty() ? q.value : convert(q.value, shown.unit.toStdString(), spec->unit);
      if (!shown.unit.isEmpty()) got += QLatin1Char(' ') + shown.unit;
    }
  } catch (const std::exception& e) {
    const QString why =
        spec->is_flag() ? QStringLiteral("expected on or off, got \"%1\"").arg(typed) : QString::fromUtf8(e.what());
    d->reject(key, spec, key + QStringLiteral(": ") + why);
    return false;
  }
  const QString undo_text = tr("Set %1 to %2").arg(key, spec->is_flag() ? d->shown(*spec, value) : got);
  return d->submit(key, *spec, value, got, undo_text);
}

QUndoStack* ParameterEditor::undoStack() const { return d->stack; }

void ParameterEditor::setUndoStack(QUndoStack* shared) {
  if (d->stack && d->stack->parent() == this) delete d->stack;
  d->stack = shared;
  d->own_history = false;
}

QTableWidget* ParameterEditor::table() const { return d->table; }

}  // namespace swashtune::ui
