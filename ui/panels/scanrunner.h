#pragma once

// Runs core's runScan() for the Scan and Map panels on a BackgroundRun
// (support/backgroundrun.h): progress and the result come back on the GUI thread; a new run
// or cancel() stops the one in progress, and a result of a run that was superseded is dropped.

#include "loopsketch/analysis/scan.h"

#include <QObject>
#include <QStringList>

#include <memory>

namespace loopsketch::ui {

/// What the Scan and Map panels offer to scan: every part's value ("CF"), then every other
/// numeric field with a finite, non-zero value ("RL.c", "U1.gbw"), in part order.
QStringList scanTargetNames(const Design &design);

class BackgroundRun;
class DesignDocument;

/// Writes the values of a scan row into the document's design as one undo step (a macro of
/// field edits, "Scan: CF = 2.2 pF"); false when a value was refused (the message in `error`).
bool applyScanValues(DesignDocument *document, const std::vector<ScanAxis> &axes,
                     const std::vector<double> &values, QString *error);

/// One metric a panel plots: its name and unit, and its value in a row.
struct ScanMetricInfo
{
    QString name; ///< "phase margin"
    QString unit; ///< "°", "Hz", the gain unit ...
    OptionalNumber ScanMetrics::*member;
};
/// The metrics in the order of the CSV columns.
const std::vector<ScanMetricInfo> &scanMetricInfos();
/// The metric's unit as shown: the gain unit for gain, the output's for noise.
QString scanMetricUnit(const ScanMetricInfo &m, const QString &gainUnit);
/// A metric's value as shown ("75.8°", "52.0 dB", "92 kHz"), "—" where it does not exist.
QString scanValueText(const OptionalNumber &v, const QString &unit);

class ScanRunner : public QObject
{
    Q_OBJECT

public:
    explicit ScanRunner(QObject *parent = nullptr);

    /// Starts a scan (one axis) or map (two) of `design` computing `metrics` (empty: every
    /// one, see ScanOptions::metrics); a run in progress is cancelled.
    void start(const Design &design, std::vector<ScanAxis> axes,
               std::vector<ScanMetric> metrics = {});
    void cancel();
    bool isRunning() const;

signals:
    void progressed(int done, int total);
    /// The finished run (cancelled ones too, with scan.cancelled set).
    void finished(std::shared_ptr<const loopsketch::ScanResult> scan);
    /// The run could not start (core's diagnostics as text).
    void failed(const QString &message);

private:
    BackgroundRun *m_run;
};

} // namespace loopsketch::ui
