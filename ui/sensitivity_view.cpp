#include "sensitivity_view.hpp"

#include <QComboBox>
#include <QHBoxLayout>
#include <QLabel>
#include <QPushButton>
#include <QHeaderView>
#include <QScrollArea>
#include <QTabWidget>
#include <QTableWidget>
#include <QVBoxLayout>
#include <QtConcurrent/QtConcurrentRun>
#include <algorithm>
#include <cmath>
#include <qcustomplot.h>
#include <thread>

#include "plot_style.hpp"
#include "qt_text.hpp"
#include "swashtune/safety.hpp"

namespace swashtune::ui {
namespace {

constexpr int kMostBars = 12;

}  // namespace

SensitivityView::SensitivityView(QWidget* parent)
    : QWidget(parent),
      figure_(new QComboBox),
      compute_(new QPushButton(tr("Work out at the present design"))),
      status_(new QLabel),
      chart_(new QCustomPlot),
      words_(new QLabel),
      watcher_(new QFutureWatcher<SensitivityReport>(this)),
      remedies_button_(new QPushButton(tr("Find remedies for a pump that hunts"))),
      remedies_status_(new QLabel),
      remedies_table_(new QTableWidget),
      remedies_watcher_(new QFutureWatcher<RemedyReport>(this)) {
  setObjectName("sensitivity-view");
  figure_->setObjectName("sensitivity-figure");
  compute_->setObjectName("sensitivity-compute");
  for (Response r : all_responses) figure_->addItem(QString::fromUtf8(words_of(r)), QString::fromUtf8(key_of(r)));
  figure_->setCurrentIndex(static_cast<int>(Response::damping));
  auto* top = new QHBoxLayout;
  top->addWidget(new QLabel(tr("Rank by")));
  top->addWidget(figure_, 1);
  auto* outer = new QVBoxLayout(this);
  outer->setContentsMargins(0, 0, 0, 0);
  pages_ = new QTabWidget;
  pages_->setObjectName("sensitivity-pages");
  outer->addWidget(pages_);
  auto* effects_page = new QWidget;
  auto* remedies_page = new QWidget;
  pages_->addTab(effects_page, tr("Ranked effects"));
  pages_->addTab(remedies_page, tr("Remedies"));
  auto* layout = new QVBoxLayout(effects_page);
  layout->addLayout(top);
  layout->addWidget(compute_);
  status_->setWordWrap(true);
  status_->setSizePolicy(QSizePolicy::Preferred, QSizePolicy::Minimum);
  status_->setMinimumHeight(3 * status_->fontMetrics().height());
  layout->addWidget(status_);
  chart_->setMinimumHeight(240);
  layout->addWidget(chart_, 3);
  words_->setWordWrap(true);
  words_->setTextInteractionFlags(Qt::TextSelectableByMouse);
  words_->setAlignment(Qt::AlignTop | Qt::AlignLeft);
  auto* words_scroll = new QScrollArea;
  words_scroll->setWidget(words_);
  words_scroll->setWidgetResizable(true);
  words_scroll->setFrameShape(QFrame::NoFrame);
  words_scroll->setMinimumHeight(120);
  layout->addWidget(words_scroll, 2);
  auto* remedies_layout = new QVBoxLayout(remedies_page);
  remedies_button_->setObjectName("remedies-find");
  remedies_layout->addWidget(remedies_button_);
  remedies_status_->setWordWrap(true);
  remedies_status_->setSizePolicy(QSizePolicy::Preferred, QSizePolicy::Minimum);
  remedies_status_->setText(tr("For a pump that hunts at deadhead: each single change a plant can make, with the "
                               "smallest amount that stops the hunting, the smallest change first."));
  remedies_layout->addWidget(remedies_status_);
  remedies_table_->setObjectName("remedies-table");
  remedies_table_->setColumnCount(5);
  remedies_table_->setHorizontalHeaderLabels({tr("change"), tr("amount"), tr("damping after"), tr("run"), QString()});
  remedies_table_->horizontalHeader()->setSectionResizeMode(QHeaderView::ResizeToContents);
  remedies_table_->horizontalHeader()->setSectionResizeMode(0, QHeaderView::Stretch);
  remedies_table_->setWordWrap(true);
  remedies_table_->verticalHeader()->setVisible(false);
  remedies_table_->setEditTriggers(QAbstractItemView::NoEditTriggers);
  remedies_layout->addWidget(remedies_table_, 1);
  connect(remedies_button_, &QPushButton::clicked, this, &SensitivityView::remediesRequested);
  connect(remedies_watcher_, &QFutureWatcher<RemedyReport>::finished, this, [this] {
    remedies_button_->setEnabled(true);
    try {
      remedies_ = remedies_watcher_->result();
    } catch (const std::exception& e) {
      remedies_.reset();
      remedies_status_->setText(tr("Could not work the remedies out: %1").arg(QString::fromUtf8(e.what())));
    }
    showRemedies();
    emit remediesFinished();
  });
  status_->setText(tr("What a 10 % larger value of each tunable part (10 degC hotter oil) does to the figure "
                      "chosen, first order."));
  connect(compute_, &QPushButton::clicked, this, &SensitivityView::computeRequested);
  connect(figure_, &QComboBox::currentIndexChanged, this, [this] { showRanking(); });
  connect(watcher_, &QFutureWatcher<SensitivityReport>::finished, this, [this] {
    compute_->setEnabled(true);
    try {
      report_ = watcher_->result();
      status_->setText(tr("The loop linearised at deadhead; run figures from the data-sheet test (from full flow). "
                          "First order: run a changed design before acting on it."));
    } catch (const std::exception& e) {
      report_.reset();
      status_->setText(tr("Could not work the sensitivities out: %1").arg(QString::fromUtf8(e.what())));
    }
    showRanking();
    emit finished();
  });
  showRanking();
}

SensitivityView::~SensitivityView() {
  watcher_->waitForFinished();
  remedies_watcher_->waitForFinished();
}

void SensitivityView::findRemedies(const Scenario& design) {
  if (remedies_watcher_->isRunning()) return;
  remedies_button_->setEnabled(false);
  remedies_status_->setText(tr("Trying each change a plant can make..."));
  remedies_base_ = design;
  RemedyOptions options;
  options.jobs = static_cast<int>(std::max(1u, std::thread::hardware_concurrency()));
  remedies_watcher_->setFuture(QtConcurrent::run([design, options] { return rank_remedies(design, options); }));
}

void SensitivityView::showRemedies() {
  remedies_table_->setRowCount(0);
  if (!remedies_) return;
  const RemedyReport& r = *remedies_;
  if (!r.hunts) {
    remedies_status_->setText(tr("This pump does not hunt at deadhead: no remedy is needed."));
    return;
  }
  remedies_status_->setText(
      (r.by_runs ? tr("Judged by runs of the study's events (dry friction decides the loop; stick-slip depends on "
                      "the disturbance, so try a remedy on every duty). ")
                 : tr("Judged by the eigenvalues at deadhead (damping ratio at least 0.05). ")) +
      tr("The smallest amount of each single change that stops the hunting, the smallest change first. Make one "
         "change at a time, locked out, and check it with a gauge."));
  for (const Remedy& m : r.remedies) {
    if (!m.found) continue;
    const int row = remedies_table_->rowCount();
    remedies_table_->insertRow(row);
    const QString amount = QStringLiteral("%1 \u2192 %2")
                               .arg(m.spec->is_none(m.from) ? qs(m.spec->none_word)
                                                            : QString::number(m.from, 'g', 4),
                                    QString::number(m.to, 'g', 4)) +
                           QStringLiteral(" ") + qs(m.spec->unit);
    auto* action = new QTableWidgetItem(qs(m.action));
    action->setToolTip(qs(m.action));
    remedies_table_->setItem(row, 0, action);
    auto* change = new QTableWidgetItem(qs(m.spec->key) + ":\n" + amount);
    change->setToolTip(change->text());
    remedies_table_->setItem(row, 1, change);
    remedies_table_->setItem(row, 2,
                             new QTableWidgetItem(m.least_damping ? QString::number(*m.least_damping, 'f', 3) : "-"));
    remedies_table_->setItem(row, 3, new QTableWidgetItem(m.run_hunts ? tr("still hunts") : tr("settles")));
    auto* compare = new QPushButton(tr("Compare"));
    compare->setObjectName(QStringLiteral("remedy-compare-%1").arg(row));
    Scenario design = remedies_base_;
    m.spec->set(design.parameters, m.to);
    for (const ParameterSpec* extra : m.also) extra->set(design.parameters, 0.0);
    const QString name = tr("remedy: %1").arg(qs(m.action));
    connect(compare, &QPushButton::clicked, this, [this, name, design] { emit remedyToCompare(name, design); });
    remedies_table_->setCellWidget(row, 4, compare);
  }
  remedies_table_->resizeRowsToContents();
  if (remedies_table_->rowCount() == 0)
    remedies_status_->setText(remedies_status_->text() + tr(" None of the single changes tried stops it."));
}

void SensitivityView::setUnits(UnitSystem system) {
  units_ = system;
  showRanking();
}

bool SensitivityView::busy() const { return watcher_->isRunning(); }

void SensitivityView::compute(const Scenario& design) {
  if (busy()) return;
  compute_->setEnabled(false);
  status_->setText(tr("Working the sensitivities out..."));
  SensitivityOptions options;
  options.jobs = static_cast<int>(std::max(1u, std::thread::hardware_concurrency()));
  watcher_->setFuture(QtConcurrent::run([design, options] { return sensitivity(design, options); }));
}

Response SensitivityView::chosen() const {
  return all_responses[std::clamp(figure_->currentIndex(), 0, response_count - 1)];
}

QString SensitivityView::wordsText() const { return words_->text(); }

void SensitivityView::showRanking() {
  chart_->clearPlottables();
  bars_.clear();
  const QPalette pal = palette();
  chart_->setBackground(pal.brush(QPalette::Base));
  style_axis(chart_->xAxis, pal, font());
  style_axis(chart_->yAxis, pal, font());
  const Response r = chosen();
  const QString unit = QString::fromUtf8(response_shown_unit(r, units_));
  chart_->xAxis->setLabel(tr("change of %1%2").arg(QString::fromUtf8(words_of(r)), unit.isEmpty() ? "" : " [" + unit + "]"));
  if (!report_) {
    words_->setText(QString());
    chart_->replot();
    return;
  }
  std::vector<const ParameterEffect*> ranked;
  for (const ParameterEffect& e : report_->effects)
    if (e.effect[r]) ranked.push_back(&e);
  std::stable_sort(ranked.begin(), ranked.end(), [&](const ParameterEffect* a, const ParameterEffect* b) {
    return std::abs(*a->effect[r]) > std::abs(*b->effect[r]);
  });
  if (ranked.size() > static_cast<std::size_t>(kMostBars)) ranked.resize(kMostBars);
  const bool dark = is_dark(pal);
  const std::optional<bool> larger_better = larger_is_better(r);
  const QColor better = for_background(QColor(0x2f, 0x9e, 0x44), dark);
  const QColor worse = for_background(QColor(0xc9, 0x2a, 0x2a), dark);
  const QColor neither = blend(pal.color(QPalette::WindowText), pal.color(QPalette::Base), 0.45);
  QSharedPointer<QCPAxisTickerText> names(new QCPAxisTickerText);
  double widest = 0.0;
  const int n = static_cast<int>(ranked.size());
  for (int i = 0; i < n; ++i) {
    const ParameterEffect& e = *ranked[i];
    const double shown = response_shown(r, *e.effect[r], units_);
    bars_.emplace_back(qs(e.spec->key), shown);
    widest = std::max(widest, std::abs(shown));
    // One bar per plottable: each takes the colour of what it does.
    auto* bar = new QCPBars(chart_->yAxis, chart_->xAxis);
    bar->setName(bars_.back().first);
    bar->setWidth(0.7);
    const QColor c = !larger_better ? neither : ((shown > 0.0) == *larger_better ? better : worse);
    bar->setBrush(c);
    bar->setPen(QPen(c.darker(130)));
    const double position = n - i;  // the largest at the top
    bar->addData(position, shown);
    names->addTick(position, bars_.back().first);
  }
  chart_->yAxis->setTicker(names);
  chart_->yAxis->setRange(0.3, n + 0.7);
  chart_->xAxis->setRange(-1.1 * std::max(widest, 1e-12), 1.1 * std::max(widest, 1e-12));
  chart_->replot();

  QStringList lines;
  if (report_->stability.dry_friction_dominates)
    lines << tr("Dry friction decides this loop's small motions: no linear figure applies.");
  else if (!report_->stability.margins_apply && (r == Response::gain_margin || r == Response::phase_margin ||
                                                 r == Response::modulus_margin))
    lines << tr("The loop margins do not apply here: %1").arg(qs(report_->stability.note));
  for (int i = 0; i < std::min(n, 5); ++i) lines << QStringLiteral("\u2022 ") + qs(effect_in_words(*ranked[i], r, units_)) + ".";
  if (n == 0) lines << tr("No parameter has a figure for %1 at this design.").arg(QString::fromUtf8(words_of(r)));
  lines << QString::fromUtf8(safety_notice_short);
  words_->setText(lines.join('\n'));
}

}  // namespace swashtune::ui
