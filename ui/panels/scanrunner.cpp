#include "panels/scanrunner.h"

#include "support/backgroundrun.h"
#include "support/qtadapter.h"
#include "window/designdocument.h"

#include "loopsketch/base/value.h"

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

QString scanMetricUnit(const ScanMetricInfo &m, const QString &gainUnit)
{
    if (m.member == &ScanMetrics::gain)
        return gainUnit;
    if (m.member == &ScanMetrics::outputNoiseRms)
        return gainUnit.startsWith(QLatin1Char('A')) ? QStringLiteral("A") : QStringLiteral("V");
    return m.unit;
}

QString scanValueText(const OptionalNumber &v, const QString &unit)
{
    if (!v)
        return QStringLiteral("—");
    if (unit == QStringLiteral("°") || unit == QStringLiteral("dB") || unit == QStringLiteral("%"))
        return QString::number(*v, 'f', 1) + (unit == QStringLiteral("°") ? "" : " ") + unit;
    return toQString(formatEngineering(*v, 3, toStdString(unit)));
}

ScanRunner::ScanRunner(QObject *parent) : QObject(parent), m_run(new BackgroundRun(this))
{
    connect(m_run, &BackgroundRun::progressed, this, [this](std::size_t done, std::size_t total) {
        if (total > 0)
            emit progressed(int(done), int(total));
    });
}

bool ScanRunner::isRunning() const
{
    return m_run->isRunning();
}

void ScanRunner::cancel()
{
    m_run->cancel();
}

void ScanRunner::start(const Design &design, std::vector<ScanAxis> axes,
                       std::vector<ScanMetric> metrics)
{
    m_run->start(
        [design, axes = std::move(axes),
         metrics = std::move(metrics)](BackgroundRun::State &state) {
            ScanOptions options;
            options.metrics = metrics;
            options.cancel = &state.cancel;
            options.progress = [&state](std::size_t done, std::size_t total) {
                state.total = total;
                state.done = done;
            };
            return runScan(design, axes, options);
        },
        [this](Result<ScanResult> result) {
            if (result)
                emit finished(std::make_shared<const ScanResult>(std::move(result).value()));
            else
                emit failed(toQString(result.errorText()));
        });
}

} // namespace loopsketch::ui
