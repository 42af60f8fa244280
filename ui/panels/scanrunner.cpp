#include "panels/scanrunner.h"

#include "support/qtadapter.h"
#include "window/designdocument.h"

#include <QMetaObject>
#include <QPointer>
#include <QUndoStack>

#include <cmath>

namespace loopsketch::ui {

QStringList scanTargetNames(const Design &design)
{
    QStringList primary, others;
    for (const Part &p : design.parts) {
        if (!p.primaryField().empty())
            primary.append(toQString(p.id));
        for (const FieldSpec &f : partSpec(p.type).fields) {
            if (f.name == p.primaryField())
                continue;
            const double v = p.number(f.name);
            if (std::isfinite(v) && v != 0)
                others.append(toQString(p.id + "." + std::string(f.name)));
        }
    }
    return primary + others;
}

bool applyScanValues(DesignDocument *document, const std::vector<ScanAxis> &axes,
                     const std::vector<double> &values, QString *error)
{
    QStringList said;
    for (std::size_t k = 0; k < axes.size() && k < values.size(); ++k)
        said.append(toQString(axes[k].name()) + QStringLiteral(" = ")
                    + toQString(formatEngineering(values[k], 3, axes[k].unit)));
    QUndoStack *stack = document->undoStack();
    stack->beginMacro(QObject::tr("Scan: %1").arg(said.join(QStringLiteral(", "))));
    bool ok = true;
    for (std::size_t k = 0; k < axes.size() && k < values.size() && ok; ++k)
        ok = document->setFieldText(axes[k].part, axes[k].field,
                                    toQString(formatEngineering(values[k], 3)), error);
    stack->endMacro();
    return ok;
}

const std::vector<ScanMetricInfo> &scanMetricInfos()
{
    static const std::vector<ScanMetricInfo> infos{
        {QObject::tr("gain"), QString(), &ScanMetrics::gain},
        {QObject::tr("bandwidth"), QStringLiteral("Hz"), &ScanMetrics::bandwidthHz},
        {QObject::tr("phase margin"), QStringLiteral("°"), &ScanMetrics::phaseMarginDeg},
        {QObject::tr("gain margin"), QStringLiteral("dB"), &ScanMetrics::gainMarginDb},
        {QObject::tr("peaking"), QStringLiteral("dB"), &ScanMetrics::peakingDb},
        {QObject::tr("overshoot"), QStringLiteral("%"), &ScanMetrics::overshootPct},
        {QObject::tr("settling time"), QStringLiteral("s"), &ScanMetrics::settlingTimeS},
        {QObject::tr("output noise rms"), QString(), &ScanMetrics::outputNoiseRms},
        {QObject::tr("z_in at DC"), QStringLiteral("Ω"), &ScanMetrics::zIn},
        {QObject::tr("z_out at DC"), QStringLiteral("Ω"), &ScanMetrics::zOut},
    };
    return infos;
}

ScanRunner::ScanRunner(QObject *parent) : QObject(parent) { }

ScanRunner::~ScanRunner()
{
    stop();
}

void ScanRunner::stop()
{
    if (m_cancel)
        m_cancel->store(true);
    if (m_thread.joinable())
        m_thread.join();
    m_running = false;
}

void ScanRunner::cancel()
{
    if (m_cancel)
        m_cancel->store(true);
}

void ScanRunner::start(const Design &design, std::vector<ScanAxis> axes)
{
    stop();
    const int generation = ++m_generation;
    m_cancel = std::make_shared<std::atomic<bool>>(false);
    m_running = true;
    QPointer<ScanRunner> self(this);
    auto cancel = m_cancel;
    m_thread = std::thread([self, cancel, generation, design, axes = std::move(axes)] {
        ScanOptions options;
        options.cancel = cancel.get();
        options.progress = [self, generation](std::size_t done, std::size_t total) {
            QMetaObject::invokeMethod(
                self.data(),
                [self, generation, done, total] {
                    if (self && self->m_generation == generation)
                        emit self->progressed(int(done), int(total));
                },
                Qt::QueuedConnection);
        };
        auto result = runScan(design, axes, options);
        std::shared_ptr<const ScanResult> scan;
        QString message;
        if (result)
            scan = std::make_shared<const ScanResult>(std::move(result).value());
        else
            message = toQString(result.errorText());
        QMetaObject::invokeMethod(
            self.data(),
            [self, generation, scan, message] {
                if (!self || self->m_generation != generation)
                    return;
                self->m_running = false;
                if (scan)
                    emit self->finished(scan);
                else
                    emit self->failed(message);
            },
            Qt::QueuedConnection);
    });
}

} // namespace loopsketch::ui
