#include "sensitivity_view.hpp"

#include <QComboBox>
#include <QHBoxLayout>
#include <QLabel>
#include <QPushButton>
#include <QScrollArea>
#include <QVBoxLayout>
#include <QtConcurrent/QtConcurrentRun>
#include <algorithm>
#include <cmath>
#include <qcustomplot.h>
#include <thread>

#include "plot_style.hpp"
#include "swashtune/safety.hpp"

namespace swashtune::ui {
namespace {

constexpr int kMostBars = 12;

QString qs(const std::string& s) { return QString::fromStdString(s); }

}  // namespace

SensitivityView::SensitivityView(QWidget* parent)
    : QWidget(parent),
      figure_(new QComboBox),
      compute_(new QPushButton(tr("Work out at the present design"))),
      status_(new QLabel),
      chart_(new QCustomPlot),
      words_(new QLabel),
      watcher_(new QFutureWatcher<SensitivityReport>(this)) {
  setObjectName("sensitivity-view");
  figure_->setObjectName("sensitivity-figure");
  compute_->setObjectName("sensitivity-compute");
  for (Response r : all_responses) figure_->addItem(QString::fromUtf8(words_of(r)), QString::fromUtf8(key_of(r)));
  figure_->setCurrentIndex(static_cast<int>(Response::damping));
  auto* top = new QHBoxLayout;
  top->addWidget(new QLabel(tr("Rank by")));
  top->addWidget(figure_, 1);
  auto* layout = new QVBoxLayout(this);
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

SensitivityView::~SensitivityView() { watcher_->waitForFinished(); }

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
    bars_.emplace_back(QString::fromUtf8(e.spec->key.data(), static_cast<int>(e.spec->key.size())), shown);
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
