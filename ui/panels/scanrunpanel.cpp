#include "panels/scanrunpanel.h"

#include "support/qtadapter.h"
#include "window/designdocument.h"

#include "loopsketch/design/designfile.h"

#include <QComboBox>
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
    m_run = new QPushButton(runLabel, this);
    m_cancel = new QPushButton(tr("Cancel"), this);
    m_cancel->setEnabled(false);
    m_progress = new QProgressBar(this);
    m_progress->setMaximumWidth(140);
    m_status = new QLabel(this);
    m_hover = new QLabel(this);

    connect(m_run, &QPushButton::clicked, this, [this] { run(); });
    connect(m_cancel, &QPushButton::clicked, this, &ScanRunPanel::cancel);
    connect(m_metric, &QComboBox::currentIndexChanged, this, [this] { redraw(); });
    connect(m_runner, &ScanRunner::progressed, this, [this](int done, int total) {
        m_progress->setMaximum(total);
        m_progress->setValue(done);
    });
    connect(m_runner, &ScanRunner::failed, this, [this](const QString &message) {
        m_status->setText(message);
        m_cancel->setEnabled(false);
        m_run->setEnabled(true);
    });
    connect(m_runner, &ScanRunner::finished, this, [this](std::shared_ptr<const ScanResult> scan) {
        m_scan = std::move(scan);
        m_scanText = m_pendingText;
        m_cancel->setEnabled(false);
        m_run->setEnabled(true);
        m_progress->setValue(m_progress->maximum());
        m_status->setText(finishedText(*m_scan));
        redraw();
        emit runFinished();
    });
    connect(m_document, &DesignDocument::structureChanged, this, [this] { refreshTargets(); });
    connect(m_document, &DesignDocument::designReset, this, [this] { refreshTargets(); });
    connect(m_document, &DesignDocument::analysisChanged, this, [this] { redraw(); });
}

void ScanRunPanel::layOut(const QList<QWidget *> &targets, const QString &metricLabel,
                          QWidget *view)
{
    auto *controls = new QHBoxLayout;
    for (QWidget *w : targets)
        controls->addWidget(w);
    for (QWidget *w : std::initializer_list<QWidget *>{m_series, m_run, m_cancel, m_progress})
        controls->addWidget(w);
    auto *show = new QHBoxLayout;
    show->addWidget(new QLabel(metricLabel, this));
    show->addWidget(m_metric);
    show->addWidget(m_status, 1);
    auto *layout = new QVBoxLayout(this);
    layout->addLayout(controls);
    layout->addLayout(show);
    layout->addWidget(view, 1);
    layout->addWidget(m_hover);
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

void ScanRunPanel::startRun(std::vector<ScanAxis> axes, const QString &status)
{
    m_status->setText(status);
    m_progress->setValue(0);
    m_cancel->setEnabled(true);
    m_pendingText = serializeDesign(m_document->design());
    m_runner->start(m_document->design(), std::move(axes));
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
        m_status->setText(error);
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
    if (!m_scan || m_scan->cancelled || m_scanText != serializeDesign(m_document->design()))
        return std::nullopt;
    return SheetScan{m_scan.get(), metricIndex()};
}

void ScanRunPanel::setMetric(int index)
{
    m_metric->setCurrentIndex(index);
}

} // namespace loopsketch::ui
