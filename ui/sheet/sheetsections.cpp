#include "sheet/sheetsections.h"

#include "panels/noisepanel.h"
#include "sheet/sheetplots.h"
#include "sketch/sketchlayout.h"
#include "sketch/sketchscene.h"

#include "loopsketch/analysis/metrics.h"
#include "loopsketch/analysis/trialmetrics.h"
#include "loopsketch/design/candidate.h"

#include <QBuffer>
#include <QDate>
#include <QSvgGenerator>
#include <QSvgRenderer>

#include <algorithm>
#include <cmath>
#include <functional>
#include <vector>

namespace loopsketch::ui::sheet {

namespace {

// The text of README.md's "What the model does not cover".
const char *const kCautions
    = "Loopsketch computes a small-signal linear model. It does not model supply limits, slew "
      "rate, output saturation, common-mode limits, thermal effects, breakdown, or any "
      "large-signal behaviour, and its gain block is a generic linear amplifier, not a model of "
      "any real device. Check a design on the bench. Designs connected to mains, high voltage, "
      "medical equipment or safety functions must follow the applicable standards, local codes "
      "and licensed engineering practice; Loopsketch is not a substitute for them.";

} // namespace

void titleBlock(SheetWriter &w, const Design &d, const Analysis &a, const QString &fileName,
                const SheetSpread *spread)
{
    w.paragraph(d.title.empty() ? QStringLiteral("Untitled design") : q(d.title),
                sheetFont(15, true));
    if (!a.stable && !a.stabilityKnown) {
        // First thing on the sheet: no verdict on stability, and why.
        w.advance(1);
        w.paragraph(QStringLiteral("STABILITY UNKNOWN"), sheetFont(14, true), 0, kFail);
        w.paragraph(q(a.closedLoopReason)
                        + QStringLiteral(". Bandwidth, peaking, step response and noise rms are "
                                         "not given; every spec fails."),
                    sheetFont(kBodyPt, true), 0, kFail);
        w.advance(1);
    } else if (!a.stable) {
        // First thing on the sheet: the loop does not work, and why.
        w.advance(1);
        w.paragraph(QStringLiteral("UNSTABLE"), sheetFont(14, true), 0, kFail);
        w.paragraph(QStringLiteral("%1 closed-loop pole%2 in the right half-plane: %3. "
                                   "Bandwidth, peaking, step response and noise rms do not "
                                   "exist; every spec fails. The loop gain and impedance "
                                   "plots below show what to change.")
                        .arg(a.rhpPoles)
                        .arg(a.rhpPoles == 1 ? QString() : QStringLiteral("s"))
                        .arg(unstablePolesText(a, 4)),
                    sheetFont(kBodyPt, true), 0, kFail);
        w.advance(1);
    }
    w.advance(1.5);
    // The revision as the design file writes it; no column when the file gives none.
    const QString rev = revisionText(d);
    std::vector<SheetWriter::Column> cols{{QStringLiteral("File"), 70},
                                          {QStringLiteral("Date"), 28},
                                          {QStringLiteral("Design hash"), 30}};
    QStringList cells{fileName.isEmpty() ? QStringLiteral("(not saved)") : fileName,
                      QDate::currentDate().toString(Qt::ISODate), designContentHash(d)};
    if (!rev.isEmpty()) {
        cols.push_back({QStringLiteral("Revision"), 52});
        cells << rev;
    }
    w.table(cols, {{cells}});
    // Provenance: what produced these numbers, so a reviewer can reproduce them.
    const double kelvin = d.temperatureK();
    QString band = QStringLiteral("not computed");
    if (a.noise)
        band = eng(a.noise->bandLowHz, "Hz") + QStringLiteral(" – ")
            + eng(a.noise->bandHighHz, "Hz")
            + (a.noise->bandKind == NoiseBandKind::Given ? QStringLiteral(" (noise_band)")
                                                         : QStringLiteral(" (until converged)"));
    QString monteCarlo = QStringLiteral("none (no toleranced parts, or 0 trials)");
    if (spread)
        monteCarlo = QStringLiteral("%1 trials (%2 completed), seed %3")
                         .arg(spread->monteCarlo.trials)
                         .arg(spread->monteCarlo.completed)
                         .arg(spread->monteCarlo.seed);
    w.paragraph(
        QStringLiteral("Loopsketch %1 · design hash FNV-1a (32 bit) of the saved design text · "
                       "sweep %2 – %3, %4 points per decade · temperature %5 K (%6 °C%7) · "
                       "noise band %8 · Monte Carlo %9")
            .arg(QStringLiteral(LOOPSKETCH_VERSION), eng(d.sweep.start.si, "Hz"),
                 eng(d.sweep.stop.si, "Hz"))
            .arg(d.sweep.pointsPerDecade)
            .arg(QString::number(kelvin, 'g', 6), QString::number(kelvin - 273.15, 'g', 5),
                 d.temperature ? QString() : QStringLiteral(", the default"), band, monteCarlo),
        sheetFont(7.5), 0, QColor(70, 70, 70));
    w.advance(1);
    if (!d.notes.empty())
        w.paragraph(q(d.notes), sheetFont(kBodyPt), 0, QColor(60, 60, 60));
}

void sketchSection(SheetWriter &w, const Design &d)
{
    w.heading(QStringLiteral("Sketch"));
    const double h = 62;
    w.ensure(h);
    if (QPainter *p = w.painter()) {
        SketchScene scene;
        scene.rebuild(&d, d.sketch ? *d.sketch : automaticLayout(d));
        const QRectF source = scene.itemsBoundingRect().adjusted(-10, -10, 10, 10);
        // Through an SVG in memory: the scene's point-size fonts would otherwise be sized for
        // the PDF's 1200 dpi while its geometry is scaled to the target.
        QBuffer buffer;
        buffer.open(QIODevice::ReadWrite);
        {
            QSvgGenerator svg;
            svg.setOutputDevice(&buffer);
            const QSize size = source.size().toSize();
            svg.setSize(size);
            svg.setViewBox(QRect(QPoint(0, 0), size));
            QPainter sp(&svg);
            scene.render(&sp, QRectF(QPointF(0, 0), QSizeF(size)), source, Qt::KeepAspectRatio);
        }
        QSvgRenderer renderer(buffer.data());
        renderer.setAspectRatioMode(Qt::KeepAspectRatio);
        renderer.render(p, w.toDevice(QRectF(0, w.y(), w.width(), h)));
    }
    w.advance(h + 2);
}

void partsSection(SheetWriter &w, const Design &d)
{
    w.heading(QStringLiteral("Parts"), 3 * kRowMm);
    // Every field that enters the analysis, from core's one table (partFieldTexts()), the
    // same rows as `loopsketch analyze`.
    std::vector<SheetWriter::Row> rows;
    const QColor grey(100, 100, 100);
    for (const Part &part : d.parts) {
        const std::vector<PartFieldText> fields = partFieldTexts(part);
        for (std::size_t i = 0; i < fields.size(); ++i) {
            const PartFieldText &f = fields[i];
            const QString who = i == 0 ? q(part.id)
                : i == 1               ? q(std::string(partSpec(part.type).typeName))
                                       : QString();
            rows.push_back({{who, q(f.field), q(f.label), q(f.value), q(f.rkm), q(f.note)},
                            {i == 0 ? kInk : grey, kInk, kInk, kInk, kInk, grey}});
        }
    }
    w.table({{QStringLiteral("Part"), 19},
             {QStringLiteral("Field"), 33}, // "r_parallel_tolerance" whole
             {QStringLiteral("Quantity"), 41},
             {QStringLiteral("Value"), 34, Qt::AlignRight},
             {QStringLiteral("RKM"), 11, Qt::AlignRight},
             {QStringLiteral("Note"), 41}},
            rows);
}

void topologySection(SheetWriter &w, const Analysis &a)
{
    w.heading(QStringLiteral("Topology"));
    const QFont f = sheetFont(kBodyPt);
    if (a.topology) {
        const Topology &t = *a.topology;
        QString parts;
        for (const auto &id : t.networkParts)
            parts += (parts.isEmpty() ? QString() : QStringLiteral(", ")) + q(id);
        w.paragraph(
            QStringLiteral("%1 feedback, %2 parameters, %3 gain (%4). Feedback network: %5.")
                .arg(q(t.name()), q(toString(t.parameters())), q(t.gainType()), q(t.gainUnit()),
                     parts.isEmpty() ? QStringLiteral("—") : parts),
            f);
        if (!a.twoPortProblem.empty())
            w.paragraph(QStringLiteral("No two-port estimate: %1").arg(q(a.twoPortProblem)), f);
    } else {
        w.paragraph(QStringLiteral("Not a two-port feedback form: %1").arg(q(a.topologyReason)), f);
    }
    w.advance(1);
}

void methodSection(SheetWriter &w, const Analysis &a)
{
    w.heading(QStringLiteral("Methods side by side (DC)"));
    const std::string gu = a.gainUnit;
    const auto &tp = a.twoPort;
    const auto &rr = a.returnRatio;
    const auto tpv = [&](OptionalNumber TwoPortSummary::*m) {
        return tp ? (*tp).*m : OptionalNumber{};
    };
    std::vector<SheetWriter::Row> rows{
        {{QStringLiteral("gain"), eng(tpv(&TwoPortSummary::gain), gu), eng(a.exact.gain, gu),
          eng(rr.gain, gu), percent(tpv(&TwoPortSummary::gainErrorPct))}},
        {{QStringLiteral("loop gain (ratio)"), eng(tpv(&TwoPortSummary::loopGain), ""),
          QStringLiteral("—"), eng(rr.loopGain, ""), QStringLiteral("—")}},
        {{QStringLiteral("A circuit gain a"), eng(tpv(&TwoPortSummary::a), gu), QStringLiteral("—"),
          QStringLiteral("—"), QStringLiteral("—")}},
        {{QStringLiteral("feedback factor β"),
          a.topology ? eng(tpv(&TwoPortSummary::beta), a.topology->feedbackUnit())
                     : QStringLiteral("—"),
          QStringLiteral("—"), QStringLiteral("—"), QStringLiteral("—")}},
        {{QStringLiteral("z_in"), eng(tpv(&TwoPortSummary::zIn), "Ω"), eng(a.exact.zIn, "Ω"),
          eng(rr.zIn, "Ω"), percent(tpv(&TwoPortSummary::zInErrorPct))}},
        {{QStringLiteral("z_out"), eng(tpv(&TwoPortSummary::zOut), "Ω"), eng(a.exact.zOut, "Ω"),
          eng(rr.zOut, "Ω"), percent(tpv(&TwoPortSummary::zOutErrorPct))}},
    };
    w.table({{QStringLiteral("Quantity"), 30},
             {QStringLiteral("Two-port estimate"), 40, Qt::AlignRight},
             {QStringLiteral("Exact solution"), 40, Qt::AlignRight},
             {QStringLiteral("Return ratio"), 40, Qt::AlignRight},
             {QStringLiteral("Estimate error"), 30, Qt::AlignRight}},
            rows);
    w.paragraph(QStringLiteral("Two-port estimate: loop gain T = a·β, gain = a / (1 + a·β), the "
                               "A circuit loaded by the feedback network. Error = (two-port "
                               "estimate − exact) / exact."),
                sheetFont(7.5), 0, QColor(90, 90, 90));
}

void metricsSection(SheetWriter &w, const Design &d, const Analysis &a)
{
    w.heading(QStringLiteral("Key metrics against the specs"));
    const std::string gu = a.gainUnit;
    std::vector<SheetWriter::Row> rows;
    const auto verdict = [&a](std::optional<bool> ok) -> std::pair<QString, QColor> {
        if (!ok)
            return {QStringLiteral("no spec"), QColor(110, 110, 110)};
        if (!a.stable)
            return {QStringLiteral("fail: unstable"), kFail};
        return *ok ? std::pair{QStringLiteral("pass"), kPass}
                   : std::pair{QStringLiteral("fail"), kFail};
    };
    const QString none = QStringLiteral("— (unstable)");
    const auto add = [&](const QString &name, const QString &value, const QString &spec,
                         std::optional<bool> ok) {
        const auto [text, colour] = verdict(ok);
        rows.push_back({{name, value, spec, text}, {kInk, kInk, kInk, colour}});
    };
    // Core's spec check, the one the Candidates panel and the spread yield use.
    const SpecCheck check = checkSpecs(d.specs, d.sweep, trialMetricsOf(a));
    {
        const Specs &s = d.specs;
        std::optional<bool> ok;
        QString spec = QStringLiteral("—");
        if (s.gainMin || s.gainMax) {
            spec = QStringLiteral("%1 … %2").arg(
                s.gainMin ? eng(s.gainMin->si, gu) : QStringLiteral("−∞"),
                s.gainMax ? eng(s.gainMax->si, gu) : QStringLiteral("+∞"));
            ok = check.gain;
        }
        add(QStringLiteral("DC gain (exact)"), eng(a.exact.gain, gu), spec, ok);
    }
    {
        std::optional<bool> ok;
        QString spec = QStringLiteral("—");
        if (d.specs.bandwidthMin) {
            spec = QStringLiteral("≥ %1").arg(eng(d.specs.bandwidthMin->si, "Hz"));
            ok = check.bandwidth;
        }
        // No -3 dB point inside the sweep: the closed loop is flat beyond its end.
        const QString value = !a.stable ? none
            : a.bandwidthHz             ? eng(a.bandwidthHz, "Hz")
                                        : QStringLiteral("> %1").arg(eng(d.sweep.stop.si, "Hz"));
        add(QStringLiteral("bandwidth (−3 dB)"), value, spec, ok);
    }
    {
        std::optional<bool> ok;
        QString spec = QStringLiteral("—");
        if (d.specs.phaseMarginMinDeg) {
            spec = QStringLiteral("≥ %1").arg(degrees(*d.specs.phaseMarginMinDeg));
            ok = check.phaseMargin;
        }
        add(QStringLiteral("phase margin"), degrees(a.margins.phaseMarginDeg), spec, ok);
    }
    add(QStringLiteral("crossover |T| = 1"), eng(a.margins.crossoverHz, "Hz"), QStringLiteral("—"),
        {});
    add(QStringLiteral("gain margin"), decibels(a.margins.gainMarginDb), QStringLiteral("—"), {});
    if (a.margins.gainMargins.size() > 1) {
        QStringList all;
        for (const GainMargin &g : a.margins.gainMargins)
            all << QStringLiteral("%1 at %2").arg(decibels(g.db), eng(g.frequencyHz, "Hz", 3));
        add(QStringLiteral("every phase crossing"), all.join(QStringLiteral(", ")),
            QStringLiteral("—"), {});
    }
    add(QStringLiteral("peaking"), a.stable ? decibels(a.peakingDb) : none, QStringLiteral("—"),
        {});
    if (a.feedthroughDb)
        add(QStringLiteral("feedthrough rise"), decibels(a.feedthroughDb), QStringLiteral("—"), {});
    add(QStringLiteral("desensitivity at DC"), decibels(a.desensitivityDb), QStringLiteral("—"),
        {});
    add(QStringLiteral("rise time 10–90 %"), a.stable ? eng(a.step.riseTimeS, "s") : none,
        QStringLiteral("—"), {});
    add(QStringLiteral("overshoot"), a.stable ? percent(a.step.overshootPct) : none,
        QStringLiteral("—"), {});
    add(QStringLiteral("settling to ±%1 %").arg(a.step.settlingBand * 100, 0, 'g', 3),
        a.stable ? eng(a.step.settlingTimeS, "s") : none, QStringLiteral("—"), {});
    w.table({{QStringLiteral("Metric"), 55},
             {QStringLiteral("Value"), 40, Qt::AlignRight},
             {QStringLiteral("Spec"), 55, Qt::AlignRight},
             {QStringLiteral("Verdict"), 30, Qt::AlignRight}},
            rows);
    // Name what fails and why (core's specVerdicts(), the verdicts of checkSpecs()).
    QStringList failing;
    for (const SpecVerdict &v : a.specs)
        if (!v.pass)
            failing << q(v.label) + (v.reason.empty() ? QString() : " (" + q(v.reason) + ")");
    if (!failing.isEmpty())
        w.paragraph(QStringLiteral("Fails: %1.").arg(failing.join(QStringLiteral("; "))),
                    sheetFont(kBodyPt, true), 0, kFail);
}

void loopGainSection(SheetWriter &w, const Analysis &a)
{
    const Margins &m = a.margins;
    if (m.nearCrossover.empty())
        return;
    w.heading(QStringLiteral("Loop gain T near the crossings"));
    std::vector<SheetWriter::Row> rows;
    for (const LoopGainSample &t : m.nearCrossover) {
        rows.push_back({{eng(t.frequencyHz, "Hz", 4), q(formatPlain(t.magnitude, 5)),
                         q(formatFixed(toDecibels(t.magnitude), 2)) + QStringLiteral(" dB"),
                         q(formatFixed(t.phaseDeg, 2)) + QStringLiteral("°")}});
    }
    w.table({{QStringLiteral("Frequency"), 40},
             {QStringLiteral("|T| (ratio)"), 40, Qt::AlignRight},
             {QStringLiteral("|T| in dB"), 40, Qt::AlignRight},
             {QStringLiteral("phase of T"), 40, Qt::AlignRight}},
            rows);
    QString how = QStringLiteral("T evaluated on the circuit model at ¼, ½, 1, 2 and 4 times the "
                                 "crossover and at each phase crossing (the phase unwrapped from "
                                 "DC). Phase margin = 180° − |phase of T| where |T| = 1, the "
                                 "angle left to −180° (or to +180° where T leads)");
    if (m.phaseMarginDeg && m.crossoverHz)
        how += QStringLiteral(" (%1 at %2)")
                   .arg(degrees(m.phaseMarginDeg), eng(m.crossoverHz, "Hz", 4));
    how += QStringLiteral("; gain margin = −20·log10 |T| where the phase of T is −180°");
    if (m.gainMarginDb && m.phaseCrossoverHz)
        how += QStringLiteral(" (%1 at %2)")
                   .arg(decibels(m.gainMarginDb), eng(m.phaseCrossoverHz, "Hz", 4));
    w.paragraph(how + QLatin1Char('.'), sheetFont(7.5), 0, QColor(90, 90, 90));
}

void noiseSection(SheetWriter &w, const Analysis &a)
{
    w.heading(QStringLiteral("Noise"));
    const QFont f = sheetFont(kBodyPt);
    if (!a.noise) {
        w.paragraph(
            QStringLiteral("No noise analysis: %1")
                .arg(a.noiseProblem.empty() ? QStringLiteral("not computed") : q(a.noiseProblem)),
            f);
        w.advance(1);
        return;
    }
    const NoiseAnalysis &n = *a.noise;
    const NoiseUnitText u = noiseUnits(a);
    const std::string out = u.output.toStdString(), in = u.input.toStdString();
    if (!a.stable) {
        w.paragraph(QStringLiteral("No noise rms: the loop is unstable."), f, 0, kFail);
        w.advance(1);
        return;
    }
    w.paragraph(QStringLiteral("Output noise %1 rms, input-referred %2 rms, over %3–%4 at %5 K "
                               "(%6 °C).")
                    .arg(eng(n.outputRms, out), eng(n.inputRms, in), eng(n.bandLowHz, "Hz"),
                         eng(n.bandHighHz, "Hz"), QString::number(n.temperatureK, 'f', 2),
                         QString::number(n.temperatureK - 273.15, 'g', 5)),
                f);
    QString figures = QStringLiteral("Spot noise at %1: %2 at the output, %3 input-referred.")
                          .arg(eng(n.spot.atHz, "Hz"), eng(n.spot.outputDensity, out + "/√Hz"),
                               eng(n.spot.inputDensity, in + "/√Hz"));
    if (n.snrDb && n.signalLevel)
        figures += QStringLiteral(" SNR %1 dB for a full-scale sine of %2 peak; output peak %3, "
                                  "slew rate needed %4 at %5.")
                       .arg(QString::number(*n.snrDb, 'f', 1), eng(n.signalLevel, in),
                            eng(n.outputPeak, out), eng(n.slewRate, out + "/s"),
                            eng(n.bandHighHz, "Hz"));
    if (n.noiseFigureDb)
        figures += QStringLiteral(" Noise figure %1 dB over the band (IEEE, T0 = 290 K).")
                       .arg(QString::number(*n.noiseFigureDb, 'f', 2));
    if (n.lowFrequency)
        figures += QStringLiteral(" 0.1–10 Hz: %1 peak-to-peak at the output (6.6 × rms).")
                       .arg(eng(n.lowFrequency->outputPeakToPeak, out));
    w.paragraph(figures, f);
    QString method = QStringLiteral("Band (%1): %2.").arg(noiseBandKindText(n), q(n.bandMethod));
    if (n.brickWall && n.brickWall->outputRms)
        method += QStringLiteral(" Brick-wall equivalent for comparison: %1 rms (input-referred "
                                 "density to π/2 · f₋₃dB = %2, times the gain at the sweep start).")
                      .arg(eng(n.brickWall->outputRms, out), eng(n.brickWall->highHz, "Hz"));
    w.paragraph(method, sheetFont(7.5), 0, QColor(90, 90, 90));
    w.advance(1.5);
    if (n.contributions.empty() || n.frequenciesHz.empty())
        return;
    const std::size_t ref = noiseReferenceIndex(n);
    const auto order = noiseSourcesByShare(n);
    const auto share = [&](double rms) -> QString {
        if (!n.outputRms || !(*n.outputRms > 0))
            return QStringLiteral("—");
        const double pct = 100.0 * rms * rms / (*n.outputRms * *n.outputRms);
        return pct < 0.01 ? QStringLiteral("< 0.01 %") : QString::number(pct, 'f', 2) + " %";
    };
    const auto kind = [](NoiseSourceKind k) {
        switch (k) {
        case NoiseSourceKind::Resistor:
            return QStringLiteral("thermal (4kTR)");
        case NoiseSourceKind::VoltageNoise:
            return QStringLiteral("input voltage noise");
        case NoiseSourceKind::CurrentNoise:
            return QStringLiteral("input current noise");
        case NoiseSourceKind::Shot:
            return QStringLiteral("shot (2qI)");
        }
        return QString();
    };
    constexpr std::size_t kRows = 5;
    std::vector<SheetWriter::Row> rows;
    double restPower = 0, restPsd = 0;
    for (std::size_t i = 0; i < order.size(); ++i) {
        const NoiseContribution &c = *order[i];
        const double psd = ref < c.outputPsd.size() ? c.outputPsd[ref] : NAN;
        // Five rows, or six when the sixth is the last source: an "others" row of one
        // source would only hide its name.
        if (i >= kRows && order.size() > kRows + 1) {
            restPower += c.rms ? *c.rms * *c.rms : 0.0;
            restPsd += psd;
            continue;
        }
        rows.push_back({{noiseSourceName(c), kind(c.kind), eng(std::sqrt(psd), out + "/√Hz"),
                         eng(c.rms.value_or(NAN), out), share(c.rms.value_or(NAN))}});
    }
    if (order.size() > kRows + 1)
        rows.push_back({{QStringLiteral("%1 other sources").arg(order.size() - kRows),
                         QStringLiteral("—"), eng(std::sqrt(restPsd), out + "/√Hz"),
                         eng(std::sqrt(restPower), out), share(std::sqrt(restPower))}});
    w.table({{QStringLiteral("Source"), 46},
             {QStringLiteral("Kind"), 30},
             {QStringLiteral("Output density, %1").arg(eng(n.frequenciesHz[ref], "Hz", 3)), 42,
              Qt::AlignRight},
             {QStringLiteral("RMS at the output"), 34, Qt::AlignRight},
             {QStringLiteral("Share of power"), 28, Qt::AlignRight}},
            rows);
    w.paragraph(QStringLiteral("Share = the source's output power over the band / the total; "
                               "uncorrelated sources add in power."),
                sheetFont(7.5), 0, QColor(90, 90, 90));
}

QString spreadNumber(const OptionalNumber &v, int metric, const std::string &gainUnit)
{
    if (!v || !std::isfinite(*v))
        return QStringLiteral("—");
    if (metric == 2)
        return QString::number(*v, *v != 0 && std::abs(*v) < 0.01 ? 'g' : 'f', 2)
            + QStringLiteral("°");
    return eng(v, metric == 0 ? std::string_view(gainUnit) : std::string_view("Hz"));
}

void spreadSection(SheetWriter &w, const Design &d, const Analysis &a, const SheetSpread *spread)
{
    if (!spread)
        return;
    const WorstCaseResult &wc = spread->worstCase;
    const MonteCarloResult &mc = spread->monteCarlo;
    const std::string gu = a.gainUnit;
    w.heading(QStringLiteral("Spread over tolerances"));
    QStringList quantities;
    for (const SpreadQuantity &sq : mc.quantities)
        quantities << QStringLiteral("%1 %2 ±%3 %")
                          .arg(q(sq.part), q(sq.field),
                               QString::number(sq.tolerance * 100, 'g', 3));
    const QFont f = sheetFont(kBodyPt);
    w.paragraph(
        QStringLiteral("Toleranced quantities: %1. Worst case: %2. Monte Carlo: %3 trials "
                       "(%4 completed), %5 distribution%6, seed %7.")
            .arg(quantities.join(QStringLiteral(", ")),
                 wc.exhaustive
                     ? (wc.corners == 2
                            ? QStringLiteral("both corners of the tolerance box")
                            : QStringLiteral("all %1 corners of the tolerance box").arg(wc.corners))
                     : QStringLiteral("%1 sensitivity corners, an approximation beyond %2 "
                                      "quantities")
                           .arg(wc.corners)
                           .arg(kMaxVertexQuantities))
            .arg(mc.trials)
            .arg(mc.completed)
            .arg(q(toString(mc.distribution)),
                 mc.distribution == SpreadDistribution::Normal ? QStringLiteral(" (tolerance = 3σ)")
                                                               : QString())
            .arg(mc.seed),
        f);
    w.advance(1.5);
    std::vector<SheetWriter::Row> rows;
    const MetricRange *ranges[] = {&wc.gain, &wc.bandwidthHz, &wc.phaseMarginDeg};
    const MetricStats *stats[] = {&mc.gain, &mc.bandwidthHz, &mc.phaseMarginDeg};
    const OptionalNumber nominal[]
        = {mc.nominal.gain, mc.nominal.bandwidthHz, mc.nominal.phaseMarginDeg};
    const QString names[] = {QStringLiteral("DC gain"), QStringLiteral("bandwidth (−3 dB)"),
                             QStringLiteral("phase margin")};
    for (int m = 0; m < 3; ++m) {
        const MetricStats &s = *stats[m];
        const auto stat = [&](double v) {
            return s.count ? spreadNumber(v, m, gu) : QStringLiteral("—");
        };
        rows.push_back({{names[m], spreadNumber(nominal[m], m, gu),
                         spreadNumber(ranges[m]->min, m, gu), spreadNumber(ranges[m]->max, m, gu),
                         stat(s.min), stat(s.mean), stat(s.max), stat(s.std)}});
    }
    const double cw = (w.width() - 33) / 7;
    w.table({{QStringLiteral("Metric"), 33},
             {QStringLiteral("Nominal"), cw, Qt::AlignRight},
             {QStringLiteral("Worst min"), cw, Qt::AlignRight},
             {QStringLiteral("Worst max"), cw, Qt::AlignRight},
             {QStringLiteral("MC min"), cw, Qt::AlignRight},
             {QStringLiteral("MC mean"), cw, Qt::AlignRight},
             {QStringLiteral("MC max"), cw, Qt::AlignRight},
             {QStringLiteral("Std dev"), cw, Qt::AlignRight}},
            rows);
    QString yield = mc.hasSpecs
        ? QStringLiteral("Yield against the specs: %1 % (%2 of %3 trials meet every spec).")
              .arg(mc.yield * 100.0, 0, 'f', 2)
              .arg(mc.passed)
              .arg(mc.completed)
        : QStringLiteral("Yield: the design has no specs.");
    if (mc.failed)
        yield += QStringLiteral(" %1 trials had no circuit solution.").arg(mc.failed);
    if (mc.bandwidthHz.missing)
        yield += QStringLiteral(" %1 trials have no −3 dB point inside the sweep.")
                     .arg(mc.bandwidthHz.missing);
    w.paragraph(yield, sheetFont(kBodyPt, true));
    w.paragraph(QStringLiteral("Worst min/max: extremes over the corners; MC: Monte Carlo "
                               "statistics (std dev with n − 1)."),
                sheetFont(7.5), 0, QColor(90, 90, 90));
    if (mc.gain.count == 0 || mc.gain.histogram.empty())
        return;
    const double h = 58;
    w.advance(2);
    w.ensure(h);
    if (QPainter *p = w.painter())
        drawGainHistogram(*p, w.toDevice(QRectF(0, w.y(), w.width(), h)), w.k(), mc.gain, d.specs,
                          mc.nominal.gain, gu);
    w.advance(h + 2);
}

void plotsSection(SheetWriter &w, const Analysis &a, const std::vector<SheetOverlay> &overlays)
{
    constexpr double kTallMm = 120, kOtherMm = 95, gap = 5;
    const auto height = [&](SheetPlot plot) {
        return plot == SheetPlot::LoopGain || plot == SheetPlot::Noise ? kTallMm : kOtherMm;
    };
    w.heading(QStringLiteral("Plots"), height(kSheetPlots[0]));
    for (SheetPlot plot : kSheetPlots) {
        const double ph = height(plot);
        w.ensure(ph);
        if (QPainter *p = w.painter())
            drawSheetPlot(*p, w.toDevice(QRectF(0, w.y(), w.width(), ph)), w.k(), plot, a,
                          overlays);
        w.advance(ph + gap);
    }
}

/// Numbers the solver could not assure, or values no real part has: said before any number.
void warningsSection(SheetWriter &w, const Analysis &a)
{
    if (a.warnings.empty())
        return;
    w.heading(QStringLiteral("Warnings"));
    const QFont f = sheetFont(kBodyPt);
    for (const Diagnostic &d : a.warnings)
        w.paragraph(q(d.toString()), f);
    w.advance(1);
}

void cautionsSection(SheetWriter &w)
{
    w.heading(QStringLiteral("What the model does not cover"));
    w.paragraph(QString::fromUtf8(kCautions), sheetFont(kBodyPt));
}

} // namespace loopsketch::ui::sheet
