#include "panels/scanrunpanel.h"

#include "support/flowlayout.h"
#include "support/qtadapter.h"
#include "window/designdocument.h"

#include "loopsketch/design/designfile.h"

#include <QComboBox>
#include <QEvent>
#include <QHBoxLayout>
#include <QLabel>
#include <QProgressBar>
#include <QPushButton>
#include <QVBoxLayout>

#include <cmath>
#include <limits>

namespace loopsketch::ui {

ScanRunPanel::ScanRunPanel(DesignDocument *document, QWidget *parent)
    : QWidget(parent), m_document(document), m_runner(new ScanRunner(this))
{ }

void ScanRunPanel::makeRunControls(const QString &allSeries, const QString &runLabel)
{
    m_series = new QComboBox(this);
    m_series->addItem(allSeries);
    for (ESeries s : allESeries())
        m_series->addItem(toQString(toString(s)));
    m_metric = new QComboBox(this);
    for (const ScanMetricInfo &m : scanMetricInfos())
        m_metric->addItem(m.name);
    m_metric->setCurrentIndex(2); // phase margin
    // As wide as "phase margin": with the series and the run button it takes one line of a
    // 390-pixel dock; the list opens as wide as its entries.
    m_metric->setSizeAdjustPolicy(QComboBox::AdjustToMinimumContentsLengthWithIcon);
    m_metric->setMinimumContentsLength(12);
    m_run = new QPushButton(runLabel, this);
    m_cancel = new QPushButton(tr("Cancel"), this);
    m_cancel->setEnabled(false);
    m_progress = new QProgressBar(this);
    m_progress->setMaximumWidth(140);
    m_status = new QLabel(this);
    m_hover = new QLabel(this);

    connect(m_run, &QPushButton::clicked, this, [this] { run(); });
    connect(m_cancel, &QPushButton::clicked, this, &ScanRunPanel::cancel);
    connect(m_metric, &QComboBox::currentIndexChanged, this, [this] {
        redraw();
        computeShownMetric();
    });
    connect(m_runner, &ScanRunner::progressed, this, [this](int done, int total) {
        m_progress->setMaximum(total);
        m_progress->setValue(done);
    });
    connect(m_runner, &ScanRunner::failed, this, [this](const QString &message) {
        setStatus(message);
        showRunning(false);
    });
    connect(m_runner, &ScanRunner::finished, this, [this](std::shared_ptr<const ScanResult> scan) {
        m_scan = std::move(scan);
        m_scanText = m_pendingText;
        showRunning(false);
        m_progress->setValue(m_progress->maximum());
        setStatus(finishedText(*m_scan));
        redraw();
        emit runFinished();
        if (!m_scan->cancelled) // the metric shown was switched while it ran
            computeShownMetric();
    });
    connect(m_document, &DesignDocument::structureChanged, this, [this] { refreshTargets(); });
    connect(m_document, &DesignDocument::designReset, this, [this] { refreshTargets(); });
    connect(m_document, &DesignDocument::analysisChanged, this, [this] { redraw(); });
}

namespace {

/// `widgets` side by side in one piece of the flow, so that a label stays with its field.
QWidget *together(QWidget *parent, const QList<QWidget *> &widgets)
{
    auto *holder = new QWidget(parent);
    auto *row = new QHBoxLayout(holder);
    row->setContentsMargins(0, 0, 0, 0);
    row->setSpacing(4);
    for (QWidget *w : widgets)
        row->addWidget(w);
    return holder;
}

} // namespace

void ScanRunPanel::layOut(const QList<QWidget *> &targets, const QString &metricLabel,
                          QWidget *view, int hoverLines, bool runAfterTargets)
{
    m_controls = new QWidget(this);
    m_flow = new FlowLayout(m_controls, 10, 4);
    m_flow->setContentsMargins(0, 0, 0, 0);
    for (qsizetype i = 0; i < targets.size(); ++i) {
        if (qobject_cast<QLabel *>(targets[i]) && i + 1 < targets.size()) {
            m_flow->addWidget(together(m_controls, {targets[i], targets[i + 1]}));
            ++i;
        } else {
            m_flow->addWidget(targets[i]);
        }
    }
    if (runAfterTargets)
        m_flow->addWidget(m_run);
    m_flow->addWidget(m_series);
    m_flow->addWidget(together(m_controls, {new QLabel(metricLabel, this), m_metric}));
    if (!runAfterTargets)
        m_flow->addWidget(m_run);
    m_controls->installEventFilter(this);
    // Progress and cancel only while a run goes on, on the status line: the controls keep
    // two lines in a narrow dock, and the view the height.
    m_progress->hide();
    m_cancel->hide();
    m_status->hide();
    m_status->setWordWrap(true);
    auto *statusRow = new QHBoxLayout;
    statusRow->addWidget(m_progress);
    statusRow->addWidget(m_cancel);
    statusRow->addWidget(m_status, 1);
    m_hover->setWordWrap(true);
    m_hover->setAlignment(Qt::AlignLeft | Qt::AlignTop);
    m_hover->setMinimumHeight(hoverLines * m_hover->fontMetrics().lineSpacing());
    auto *layout = new QVBoxLayout(this);
    layout->addWidget(m_controls);
    layout->addLayout(statusRow);
    layout->addWidget(view, 1);
    layout->addWidget(m_hover);
}

void ScanRunPanel::setStatus(const QString &text)
{
    m_status->setText(text);
    m_status->setVisible(!text.isEmpty());
}

void ScanRunPanel::showRunning(bool running)
{
    m_cancel->setEnabled(running);
    m_cancel->setVisible(running);
    m_progress->setVisible(running);
}

bool ScanRunPanel::eventFilter(QObject *watched, QEvent *event)
{
    if (watched == m_controls && event->type() == QEvent::LayoutRequest)
        fitControlsHeight();
    return QWidget::eventFilter(watched, event);
}

void ScanRunPanel::resizeEvent(QResizeEvent *event)
{
    QWidget::resizeEvent(event);
    fitControlsHeight();
}

void ScanRunPanel::fitControlsHeight()
{
    if (!m_flow)
        return;
    const QMargins m = layout() ? layout()->contentsMargins() : QMargins();
    const int height = m_flow->heightForWidth(width() - m.left() - m.right());
    if (m_controls->minimumHeight() != height)
        m_controls->setMinimumHeight(height);
}

std::optional<ESeries> ScanRunPanel::chosenSeries() const
{
    if (m_series->currentIndex() > 0)
        return allESeries()[std::size_t(m_series->currentIndex() - 1)];
    return std::nullopt;
}

int ScanRunPanel::metricIndex() const
{
    return std::max(0, m_metric->currentIndex());
}

void ScanRunPanel::computeShownMetric()
{
    if (m_scan && !m_scan->computed(scanMetricInfos()[std::size_t(metricIndex())].member))
        startRun(m_scan->axes, tr("computing the %1 …").arg(m_metric->currentText()));
}

void ScanRunPanel::startRun(std::vector<ScanAxis> axes, const QString &status)
{
    setStatus(status);
    m_progress->setValue(0);
    showRunning(true);
    m_pendingText = serializeDesign(m_document->design());
    m_runner->start(m_document->design(), std::move(axes), metricsToCompute());
}

double ScanRunPanel::designValue(const ScanAxis &axis) const
{
    if (const Part *p = m_document->design().findPart(axis.part))
        return p->number(axis.field);
    return std::numeric_limits<double>::quiet_NaN();
}

bool ScanRunPanel::applyValues(const std::vector<double> &values)
{
    QString error;
    const bool ok = applyScanValues(m_document, m_scan->axes, values, &error);
    if (!ok)
        setStatus(error);
    return ok;
}

void ScanRunPanel::cancel()
{
    m_runner->cancel();
}

bool ScanRunPanel::isRunning() const
{
    return m_runner->isRunning();
}

QString ScanRunPanel::statusText() const
{
    return m_status->text();
}

std::optional<SheetScan> ScanRunPanel::sheetScan() const
{
    if (!m_scan || m_scan->cancelled || m_scanText != serializeDesign(m_document->design())
        || !m_scan->computed(scanMetricInfos()[std::size_t(metricIndex())].member))
        return std::nullopt;
    return SheetScan{m_scan.get(), metricIndex()};
}

void ScanRunPanel::setMetric(int index)
{
    m_metric->setCurrentIndex(index);
}

} // namespace loopsketch::ui
