#include "panels/spreadmetric.h"

#include <QObject>

namespace loopsketch::ui {

const MetricStats &statsOf(const MonteCarloResult &mc, SpreadPanel::Metric m)
{
    switch (m) {
    case SpreadPanel::Metric::Gain:
        return mc.gain;
    case SpreadPanel::Metric::Bandwidth:
        return mc.bandwidthHz;
    case SpreadPanel::Metric::PhaseMargin:
        break;
    }
    return mc.phaseMarginDeg;
}

const MetricRange &rangeOf(const WorstCaseResult &w, SpreadPanel::Metric m)
{
    switch (m) {
    case SpreadPanel::Metric::Gain:
        return w.gain;
    case SpreadPanel::Metric::Bandwidth:
        return w.bandwidthHz;
    case SpreadPanel::Metric::PhaseMargin:
        break;
    }
    return w.phaseMarginDeg;
}

OptionalNumber nominalOf(const TrialMetrics &t, SpreadPanel::Metric m)
{
    switch (m) {
    case SpreadPanel::Metric::Gain:
        return t.gain;
    case SpreadPanel::Metric::Bandwidth:
        return t.bandwidthHz;
    case SpreadPanel::Metric::PhaseMargin:
        break;
    }
    return t.phaseMarginDeg;
}

QString metricName(SpreadPanel::Metric m)
{
    switch (m) {
    case SpreadPanel::Metric::Gain:
        return QObject::tr("closed-loop gain");
    case SpreadPanel::Metric::Bandwidth:
        return QObject::tr("−3 dB bandwidth");
    case SpreadPanel::Metric::PhaseMargin:
        break;
    }
    return QObject::tr("phase margin");
}

QString axisName(SpreadPanel::Metric m)
{
    switch (m) {
    case SpreadPanel::Metric::Gain:
        return QObject::tr("gain");
    case SpreadPanel::Metric::Bandwidth:
        return QObject::tr("bandwidth");
    case SpreadPanel::Metric::PhaseMargin:
        break;
    }
    return QObject::tr("phase margin");
}

} // namespace loopsketch::ui
