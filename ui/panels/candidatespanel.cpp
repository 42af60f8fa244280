#include "panels/candidatespanel.h"

#include "support/qtadapter.h"
#include "window/designdocument.h"

#include "loopsketch/analysis/spread.h"
#include "loopsketch/analysis/trialmetrics.h"
#include "loopsketch/base/value.h"

#include <QAction>
#include <QHBoxLayout>
#include <QHeaderView>
#include <QInputDialog>
#include <QLabel>
#include <QPainter>
#include <QPixmap>
#include <QTableWidget>
#include <QToolButton>
#include <QVBoxLayout>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <optional>

namespace loopsketch::ui {

namespace {

// A burst of edits (wheel, arrow keys) leaves the table alone: the Readout shows the design
// live, and the table follows once the edits pause, then the worker runs for the columns
// whose applied design changed.
constexpr int kTableSettleMs = 120;
constexpr int kWorkerSettleMs = 150;
constexpr std::size_t kCacheSize = 24; ///< results; curves make each about 0.3 MB (estimated)
const QString kNoValue = QStringLiteral("—");

/// One cell: text, tooltip, and a score where higher is better (nullopt: not ranked).
struct Cell
{
    QString text = kNoValue;
    QString tip;
    std::optional<double> score;
    int verdict = 0; ///< 1 pass, -1 fail
    bool inherited = false; ///< a part value the candidate does not set
};

struct RowSpec
{
    QString title;
    QString best; ///< what "best" means in this row; empty: the row is not ranked
};

QString fixed(const OptionalNumber &v, int decimals, const QString &unit)
{
    if (!v || !std::isfinite(*v))
        return kNoValue;
    const double shown = std::abs(*v) < 0.5 * std::pow(10.0, -decimals) ? 0.0 : *v;
    return QString::number(shown, 'f', decimals) + unit;
}

QString signedPct(double v)
{
    if (!std::isfinite(v))
        return kNoValue;
    if (std::abs(v) < 0.005)
        return QStringLiteral("0.00 %");
    return (v > 0 ? QStringLiteral("+") : QString()) + QString::number(v, 'f', 2)
        + QStringLiteral(" %");
}

QString degrees(const OptionalNumber &v)
{
    if (!v || !std::isfinite(*v))
        return kNoValue;
    if (std::abs(*v) < 1.0)
        return QString::number(*v, 'f', 2) + QStringLiteral("°");
    return toQString(formatEngineering(*v, 3)) + QStringLiteral("°");
}

/// The gain the specs aim at: the window's centre, or its one bound.
std::optional<double> targetGain(const Specs &s)
{
    if (s.gainMin && s.gainMax)
        return 0.5 * (s.gainMin->si + s.gainMax->si);
    if (s.gainMin)
        return s.gainMin->si;
    if (s.gainMax)
        return s.gainMax->si;
    return std::nullopt;
}

QString partValueText(const Part &part, const Value &value)
{
    const FieldSpec *spec = findFieldSpec(part.type, part.primaryField());
    return spec ? toQString(formatValue(value.si, spec->kind, 3)) : toQString(value.text);
}

QIcon styleIcon(int index)
{
    QPixmap pixmap(28, 12);
    pixmap.fill(Qt::transparent);
    QPainter p(&pixmap);
    QPen pen(overlayColour(index), 2.0, overlayStyle(index));
    pen.setCapStyle(Qt::FlatCap);
    p.setPen(pen);
    p.drawLine(1, 6, 27, 6);
    return QIcon(pixmap);
}

} // namespace

CandidatesPanel::CandidatesPanel(DesignDocument *document, QWidget *parent)
    : QWidget(parent), m_document(document), m_table(new QTableWidget(this)),
      m_status(new QLabel(this))
{
    setObjectName(QStringLiteral("Candidates"));
    m_pool.setMaxThreadCount(1);
    m_settle.setSingleShot(true);
    connect(&m_settle, &QTimer::timeout, this, &CandidatesPanel::startWorker);

    m_pin = new QAction(tr("Pin as candidate…"), this);
    m_pin->setToolTip(tr("Store the current part values as a candidate"));
    m_rename = new QAction(tr("Rename…"), this);
    m_rename->setShortcut(Qt::Key_F2);
    m_delete = new QAction(tr("Delete"), this);
    m_delete->setShortcut(QKeySequence::Delete);
    m_makeCurrent = new QAction(tr("Make current"), this);
    m_makeCurrent->setShortcut(Qt::CTRL | Qt::Key_Return);
    m_makeCurrent->setToolTip(tr("Apply the selected candidate's values to the design"));
    for (QAction *a : {m_rename, m_delete, m_makeCurrent}) {
        a->setShortcutContext(Qt::WidgetWithChildrenShortcut);
        addAction(a);
    }
    connect(m_pin, &QAction::triggered, this, &CandidatesPanel::pinWithDialog);
    connect(m_rename, &QAction::triggered, this, &CandidatesPanel::renameWithDialog);
    connect(m_delete, &QAction::triggered, this, &CandidatesPanel::deleteSelected);
    connect(m_makeCurrent, &QAction::triggered, this, &CandidatesPanel::makeSelectedCurrent);

    auto *buttons = new QHBoxLayout;
    buttons->setContentsMargins(0, 0, 0, 0);
    buttons->setSpacing(4);
    for (QAction *a : {m_pin, m_rename, m_delete, m_makeCurrent}) {
        auto *b = new QToolButton(this);
        b->setDefaultAction(a);
        b->setToolButtonStyle(Qt::ToolButtonTextOnly);
        buttons->addWidget(b);
    }
    buttons->addSpacing(12);
    buttons->addWidget(m_status, 1);
    m_status->setStyleSheet(QStringLiteral("color: #5a6270;"));
    m_status->setTextInteractionFlags(Qt::TextSelectableByMouse);

    QFont tableFont = m_table->font();
    tableFont.setPointSizeF(8.5);
    m_table->setFont(tableFont);
    m_table->setEditTriggers(QAbstractItemView::NoEditTriggers);
    m_table->setSelectionBehavior(QAbstractItemView::SelectColumns);
    m_table->setSelectionMode(QAbstractItemView::SingleSelection);
    m_table->setWordWrap(false);
    m_table->setAlternatingRowColors(true);
    m_table->verticalHeader()->setSectionResizeMode(QHeaderView::Fixed);
    m_table->verticalHeader()->setDefaultSectionSize(QFontMetrics(tableFont).height() + 4);
    m_table->horizontalHeader()->setSectionResizeMode(QHeaderView::ResizeToContents);
    m_table->horizontalHeader()->setHighlightSections(true);
    m_table->setContextMenuPolicy(Qt::ActionsContextMenu);
    m_table->addActions({m_makeCurrent, m_rename, m_delete});
    auto *separator = new QAction(this);
    separator->setSeparator(true);
    m_table->addActions({separator, m_pin});
    connect(m_table, &QTableWidget::itemSelectionChanged, this, &CandidatesPanel::updateActions);
    connect(m_table->horizontalHeader(), &QHeaderView::sectionDoubleClicked, this, [this](int c) {
        if (c > 0) {
            m_table->selectColumn(c);
            renameWithDialog();
        }
    });

    auto *layout = new QVBoxLayout(this);
    layout->setContentsMargins(6, 4, 6, 4);
    layout->setSpacing(4);
    layout->addLayout(buttons);
    layout->addWidget(m_table, 1);

    // Every recomputation, failed or not, ends with diagnosticsChanged (the analysis is in
    // place by then), so it is the one signal to follow.
    m_refreshLater.setSingleShot(true);
    m_refreshLater.setInterval(kTableSettleMs);
    connect(&m_refreshLater, &QTimer::timeout, this, [this] { refresh(kWorkerSettleMs); });
    connect(m_document, &DesignDocument::diagnosticsChanged, &m_refreshLater,
            qOverload<>(&QTimer::start));
    connect(m_document, &DesignDocument::candidatesChanged, this, [this] { refresh(0); });
    connect(m_document, &DesignDocument::structureChanged, this, [this] { refresh(0); });
    connect(m_document, &DesignDocument::designReset, this, [this] {
        m_shown.clear();
        m_currentWorst.reset();
        refresh(0);
    });
    refresh(0);
}

CandidatesPanel::~CandidatesPanel()
{
    // The worker posts its result to this object; let it finish first.
    m_pool.waitForDone();
}

Design CandidatesPanel::keyOf(const Design &design)
{
    Design key = design;
    key.candidates.clear();
    key.sketch.reset();
    key.title.clear();
    key.notes.clear();
    return key;
}

CandidatesPanel::ComputedPtr CandidatesPanel::compute(Design key)
{
    auto c = std::make_shared<Computed>();
    AnalysisOptions options;
    options.noise = false;
    options.sensitivity = false;
    auto analysis = analyze(key, {}, options);
    if (analysis)
        c->analysis = std::make_shared<const Analysis>(std::move(analysis).value());
    else
        c->problem = toQString(analysis.errorText());
    for (const Part &p : key.parts)
        c->hasTolerances = c->hasTolerances || (p.tolerance && !p.primaryField().empty());
    if (c->hasTolerances && c->analysis) {
        SpreadOptions spread;
        spread.threads = 1; // the GUI thread keeps the other core
        auto worst = worstCase(key, spread);
        if (worst) {
            c->worstMin = worst->gain.min;
            c->worstMax = worst->gain.max;
            c->worstExhaustive = worst->exhaustive;
            c->corners = worst->corners;
        } else {
            c->worstProblem = toQString(worst.errorText());
        }
    }
    c->key = std::move(key);
    return c;
}

CandidatesPanel::ComputedPtr CandidatesPanel::cached(const Design &key) const
{
    for (auto it = m_cache.rbegin(); it != m_cache.rend(); ++it) {
        if ((*it)->key == key)
            return *it;
    }
    return nullptr;
}

void CandidatesPanel::refresh(int delayMs)
{
    m_refreshLater.stop();
    const Design &design = m_document->design();
    m_missing.clear();
    std::map<std::string, ComputedPtr> shown;
    for (const Candidate &c : design.candidates) {
        Design key = keyOf(designWithCandidate(design, c));
        if (ComputedPtr hit = cached(key)) {
            shown[c.name] = hit;
            continue;
        }
        // Until the worker has it, the column keeps its last numbers (marked as updating).
        if (const auto old = m_shown.find(c.name); old != m_shown.end())
            shown[c.name] = old->second;
        if (std::find(m_missing.begin(), m_missing.end(), key) == m_missing.end())
            m_missing.push_back(std::move(key));
    }
    m_shown = std::move(shown);
    Design currentKey = keyOf(design);
    if (ComputedPtr hit = cached(currentKey)) {
        m_currentWorst = hit;
    } else if (std::find(m_missing.begin(), m_missing.end(), currentKey) == m_missing.end()) {
        m_missing.push_back(std::move(currentKey));
    }
    if (!m_missing.empty() && (delayMs > 0 || !m_settle.isActive()))
        m_settle.start(delayMs);
    // A hidden table (the dock behind a tab) is filled when it shows or is read.
    m_tableDirty = true;
    if (isVisible())
        fillTable();
    std::vector<OverlaySource> sources = overlaySources();
    const bool same = sources.size() == m_emitted.size()
        && std::equal(sources.begin(), sources.end(), m_emitted.begin(),
                      [](const auto &a, const auto &b) {
                          return a.name == b.name && a.analysis == b.analysis;
                      });
    if (!same) {
        m_emitted = std::move(sources);
        emit resultsChanged();
    }
}

void CandidatesPanel::startWorker()
{
    if (m_busy) {
        m_again = true;
        return;
    }
    if (m_missing.empty())
        return;
    m_busy = true;
    std::vector<Design> keys = m_missing;
    setStatus(tr("analysing %n column(s)…", nullptr, int(keys.size())));
    m_pool.start([this, keys = std::move(keys)]() mutable {
        const auto start = std::chrono::steady_clock::now();
        std::vector<ComputedPtr> results;
        for (Design &k : keys)
            results.push_back(compute(std::move(k)));
        const double ms
            = std::chrono::duration<double, std::milli>(std::chrono::steady_clock::now() - start)
                  .count();
        QMetaObject::invokeMethod(
            this,
            [this, results = std::move(results), ms]() mutable {
                workerFinished(std::move(results), ms);
            },
            Qt::QueuedConnection);
    });
}

void CandidatesPanel::workerFinished(std::vector<ComputedPtr> results, double ms)
{
    m_busy = false;
    m_lastComputeMs = ms;
    for (ComputedPtr &r : results)
        m_cache.push_back(std::move(r));
    if (m_cache.size() > kCacheSize)
        m_cache.erase(m_cache.begin(),
                      m_cache.begin() + std::ptrdiff_t(m_cache.size() - kCacheSize));
    m_message.clear();
    refresh(0);
    if (m_again) {
        m_again = false;
        if (!m_missing.empty() && !m_settle.isActive())
            startWorker();
    }
}

bool CandidatesPanel::isUpToDate() const
{
    return m_missing.empty() && !m_busy && !m_settle.isActive() && !m_refreshLater.isActive();
}

std::vector<OverlaySource> CandidatesPanel::overlaySources() const
{
    std::vector<OverlaySource> sources;
    for (const Candidate &c : m_document->design().candidates) {
        const auto it = m_shown.find(c.name);
        sources.push_back({toQString(c.name),
                           it != m_shown.end() && it->second ? it->second->analysis
                                                             : std::shared_ptr<const Analysis>()});
    }
    return sources;
}

void CandidatesPanel::showEvent(QShowEvent *event)
{
    QWidget::showEvent(event);
    flush();
}

void CandidatesPanel::flush() const
{
    if (m_tableDirty)
        const_cast<CandidatesPanel *>(this)->fillTable();
}

void CandidatesPanel::fillTable()
{
    m_tableDirty = false;
    const Design &design = m_document->design();
    const Specs &specs = design.specs;
    const Analysis *currentAnalysis
        = m_document->lastDiagnostics().isEmpty() ? m_document->analysis() : nullptr;
    const std::optional<double> target = targetGain(specs);
    const Part *source = design.signalSource();
    const bool currentSource = source && source->type == PartType::ISource;

    // Rows: the parts whose value differs in some candidate, then the metrics, then one per
    // spec. A pin stores every part value; the unchanged ones stay in the column tooltip.
    std::vector<std::string> partIds;
    for (const Part &p : design.parts) {
        const auto own = p.fields.find(std::string(p.primaryField()));
        for (const Candidate &c : design.candidates) {
            const auto it = c.values.find(p.id);
            if (it != c.values.end()
                && (own == p.fields.end()
                    || !(std::abs(it->second.si - own->second.si)
                         <= 1e-12 * std::abs(own->second.si)))) {
                partIds.push_back(p.id);
                break;
            }
        }
    }
    std::vector<RowSpec> rows;
    for (const std::string &id : partIds)
        rows.push_back({toQString(id), {}});
    rows.push_back({kGainRow, tr("closest to the centre of the spec's gain window")});
    rows.push_back({kGainErrorRow, tr("smallest gain error against the spec")});
    rows.push_back({kBandwidthRow, tr("widest bandwidth")});
    rows.push_back({kPhaseMarginRow, tr("largest phase margin")});
    rows.push_back({kPeakingRow, tr("least peaking")});
    rows.push_back({kDesensitivityRow, tr("largest desensitivity (most feedback)")});
    rows.push_back({kZInRow,
                    currentSource
                        ? tr("lowest z_in (a current source's current goes into the input)")
                        : tr("highest z_in (loads the voltage source least)")});
    rows.push_back({kZOutRow,
                    design.output == OutputKind::Voltage ? tr("lowest z_out (a voltage output)")
                                                         : tr("highest z_out (a current output)")});
    rows.push_back({kWorstCaseRow, tr("narrowest worst-case gain range relative to its gain")});
    const QString gainSpecRow = tr("spec: gain window");
    const QString bwSpecRow = specs.bandwidthMin
        ? tr("spec: bandwidth ≥ %1").arg(engineering(specs.bandwidthMin->si, "Hz"))
        : QString();
    const QString pmSpecRow = specs.phaseMarginMinDeg
        ? tr("spec: phase margin ≥ %1°")
              .arg(toQString(formatEngineering(*specs.phaseMarginMinDeg, 3)))
        : QString();
    if (specs.gainMin || specs.gainMax)
        rows.push_back({gainSpecRow, {}});
    if (specs.bandwidthMin)
        rows.push_back({bwSpecRow, {}});
    if (specs.phaseMarginMinDeg)
        rows.push_back({pmSpecRow, {}});
    rows.push_back({kSpecsMetRow, tr("most specs met")});

    struct Column
    {
        QString name;
        const Candidate *candidate = nullptr;
        const Analysis *analysis = nullptr;
        const Computed *worst = nullptr;
        QString problem;
        bool stale = false;
    };
    std::vector<Column> columns;
    {
        Column current{kCurrentColumn, nullptr, currentAnalysis, m_currentWorst.get(), {}, false};
        if (!currentAnalysis)
            current.problem = m_document->lastDiagnostics().isEmpty()
                ? tr("not analysed yet")
                : m_document->lastDiagnostics();
        current.stale = !m_currentWorst || m_currentWorst->key != keyOf(design);
        columns.push_back(current);
    }
    for (const Candidate &c : design.candidates) {
        Column col{toQString(c.name), &c, nullptr, nullptr, {}, false};
        const auto it = m_shown.find(c.name);
        if (it != m_shown.end() && it->second) {
            col.analysis = it->second->analysis.get();
            col.worst = it->second.get();
            col.problem = it->second->problem;
            col.stale = it->second->key != keyOf(designWithCandidate(design, c));
        } else {
            col.problem = tr("being analysed");
            col.stale = true;
        }
        columns.push_back(col);
    }

    std::vector<std::vector<Cell>> cells(rows.size(), std::vector<Cell>(columns.size()));
    for (std::size_t ci = 0; ci < columns.size(); ++ci) {
        const Column &col = columns[ci];
        std::size_t r = 0;
        for (const std::string &id : partIds) {
            Cell &cell = cells[r++][ci];
            const Part *part = design.findPart(id);
            const std::string field(part->primaryField());
            const auto own = col.candidate ? col.candidate->values.find(id)
                                           : std::map<std::string, Value>::const_iterator();
            if (col.candidate && own != col.candidate->values.end()) {
                cell.text = partValueText(*part, own->second);
                cell.tip = tr("%1 = %2 in this candidate").arg(toQString(id), cell.text);
            } else {
                const auto it = part->fields.find(field);
                cell.text = it != part->fields.end()
                    ? partValueText(*part, it->second)
                    : toQString(formatEngineering(part->number(field), 3));
                cell.inherited = col.candidate != nullptr;
                cell.tip = col.candidate ? tr("not set by this candidate: the design's own value")
                                         : tr("%1 in the design now").arg(toQString(id));
            }
        }
        const Analysis *a = col.analysis;
        auto missing = [&](Cell &cell, const QString &why) {
            cell.text = kNoValue;
            cell.tip = a ? why : col.problem;
        };
        const std::string unit = a ? a->gainUnit : std::string();
        // closed-loop gain
        {
            Cell &cell = cells[r++][ci];
            if (a && a->exact.gain && std::isfinite(*a->exact.gain)) {
                cell.text = engineering(a->exact.gain, unit, 4);
                cell.tip = tr("exact solution at DC");
                if (target)
                    cell.score = -std::abs(*a->exact.gain - *target);
            } else {
                missing(cell, tr("the exact solution has no DC gain"));
            }
        }
        // gain error
        {
            Cell &cell = cells[r++][ci];
            if (!target) {
                cell.tip = tr("the design has no gain spec");
            } else if (a && a->exact.gain && std::isfinite(*a->exact.gain) && *target != 0) {
                const double err = (*a->exact.gain - *target) / std::abs(*target) * 100.0;
                cell.text = signedPct(err);
                cell.tip = tr("(gain − %1) / |%1|, %2")
                               .arg(engineering(*target, unit, 4),
                                    specs.gainMin && specs.gainMax
                                        ? tr("the centre of the spec's gain window")
                                        : tr("the spec's one gain bound"));
                cell.score = -std::abs(err);
            } else {
                missing(cell, tr("no gain to compare with the spec"));
            }
        }
        // bandwidth
        {
            Cell &cell = cells[r++][ci];
            if (a && a->bandwidthHz && std::isfinite(*a->bandwidthHz)) {
                cell.text = engineering(a->bandwidthHz, "Hz");
                cell.tip = tr("closed-loop −3 dB frequency (exact)");
                cell.score = *a->bandwidthHz;
            } else {
                missing(cell,
                        tr("no −3 dB point inside the sweep (up to %1)")
                            .arg(engineering(design.sweep.stop.si, "Hz")));
            }
        }
        // phase margin
        {
            Cell &cell = cells[r++][ci];
            if (a && a->margins.phaseMarginDeg && std::isfinite(*a->margins.phaseMarginDeg)) {
                cell.text = degrees(a->margins.phaseMarginDeg);
                cell.tip
                    = tr("at the loop crossover %1").arg(engineering(a->margins.crossoverHz, "Hz"));
                cell.score = *a->margins.phaseMarginDeg;
            } else {
                missing(cell, tr("the loop gain does not cross 0 dB inside the sweep"));
            }
        }
        // peaking
        {
            Cell &cell = cells[r++][ci];
            if (a && a->peakingDb && std::isfinite(*a->peakingDb)) {
                cell.text = fixed(a->peakingDb, 2, QStringLiteral(" dB"));
                cell.tip = tr("closed-loop peak above the DC gain");
                cell.score = -*a->peakingDb;
            } else {
                missing(cell, tr("no closed-loop peaking figure"));
            }
        }
        // desensitivity
        {
            Cell &cell = cells[r++][ci];
            if (a && a->desensitivityDb && std::isfinite(*a->desensitivityDb)) {
                cell.text = fixed(a->desensitivityDb, 1, QStringLiteral(" dB"));
                cell.tip = tr("20 log10 |1 + T| at DC");
                cell.score = *a->desensitivityDb;
            } else {
                missing(cell, tr("no loop gain at DC"));
            }
        }
        // z_in, z_out
        for (int k = 0; k < 2; ++k) {
            Cell &cell = cells[r++][ci];
            const OptionalNumber z = a ? (k == 0 ? a->exact.zIn : a->exact.zOut) : OptionalNumber();
            if (z && std::isfinite(*z)) {
                cell.text = engineering(z, "Ω");
                cell.tip = k == 0 ? tr("seen by the signal source, exact, at DC")
                                  : tr("seen by the load, exact, at DC");
                const bool lowBest = k == 0 ? currentSource : design.output == OutputKind::Voltage;
                cell.score = lowBest ? -std::abs(*z) : std::abs(*z);
            } else {
                missing(cell, tr("no finite impedance at DC"));
            }
        }
        // worst case
        {
            Cell &cell = cells[r++][ci];
            const Computed *w = col.worst;
            if (!a) {
                missing(cell, {});
            } else if (!w) {
                cell.text = tr("…");
                cell.tip = tr("being computed");
            } else if (!w->hasTolerances) {
                cell.text = tr("no tolerances");
                cell.tip = tr("no part of this design carries a tolerance");
            } else if (w->worstMin && w->worstMax && std::isfinite(*w->worstMin)
                       && std::isfinite(*w->worstMax)) {
                // The unit is the gain row's; leaving it out keeps the columns narrow.
                cell.text = toQString(formatEngineering(*w->worstMin, 4)) + QStringLiteral(" … ")
                    + toQString(formatEngineering(*w->worstMax, 4));
                const double nominal = a->exact.gain ? *a->exact.gain : 0.0;
                QString relative;
                if (nominal != 0) {
                    const double lo = (*w->worstMin - nominal) / std::abs(nominal) * 100.0;
                    const double hi = (*w->worstMax - nominal) / std::abs(nominal) * 100.0;
                    relative
                        = tr(" (%1 / %2 of the nominal gain)").arg(signedPct(lo), signedPct(hi));
                    // Ranked by the width to 0.01 % of the nominal gain: finer differences
                    // (the loop's finite gain) are not a designer's choice.
                    const double widthPct
                        = (*w->worstMax - *w->worstMin) / std::abs(nominal) * 100.0;
                    cell.score = -std::round(widthPct * 100.0) / 100.0;
                    relative += tr(", width %1 %").arg(widthPct, 0, 'f', 2);
                }
                cell.tip = tr("DC gain in %1 over the parts' tolerances%2, %3 corners%4")
                               .arg(toQString(unit), relative)
                               .arg(w->corners)
                               .arg(w->worstExhaustive ? tr(", every vertex")
                                                       : tr(", sensitivity corners (approximate)"));
            } else {
                missing(cell,
                        w->worstProblem.isEmpty() ? tr("no worst-case gain") : w->worstProblem);
            }
        }
        // specs
        int met = 0, checked = 0;
        if (a) {
            const TrialMetrics m = trialMetricsOf(*a);
            const SpecCheck check = checkSpecs(specs, design.sweep, m);
            auto verdict = [&](bool ok, const QString &what) {
                Cell &cell = cells[r++][ci];
                cell.text = ok ? tr("✓ pass") : tr("✗ fail");
                cell.verdict = ok ? 1 : -1;
                cell.tip = what;
                met += ok;
                ++checked;
            };
            if (specs.gainMin || specs.gainMax)
                verdict(
                    check.gain,
                    tr("gain window %1 … %2")
                        .arg(specs.gainMin ? engineering(specs.gainMin->si, unit, 4) : kNoValue,
                             specs.gainMax ? engineering(specs.gainMax->si, unit, 4) : kNoValue));
            if (specs.bandwidthMin)
                verdict(check.bandwidth, tr("a bandwidth beyond the sweep counts as a pass"));
            if (specs.phaseMarginMinDeg)
                verdict(check.phaseMargin, tr("no loop crossover counts as a fail"));
            Cell &cell = cells[r++][ci];
            if (checked > 0) {
                cell.text = tr("%1 of %2").arg(met).arg(checked);
                cell.verdict = met == checked ? 1 : -1;
                cell.score = met;
                cell.tip = tr("specs met (core's spec check)");
            } else {
                cell.tip = tr("the design has no specs");
            }
        } else {
            for (; r < rows.size(); ++r)
                missing(cells[r][ci], {});
        }
    }

    // The best of each ranked row: marked when it beats at least one other column.
    std::vector<std::vector<bool>> best(rows.size(), std::vector<bool>(columns.size(), false));
    for (std::size_t r = 0; r < rows.size(); ++r) {
        if (rows[r].best.isEmpty())
            continue;
        std::optional<double> top, bottom;
        for (const Cell &c : cells[r]) {
            if (!c.score)
                continue;
            top = top ? std::max(*top, *c.score) : *c.score;
            bottom = bottom ? std::min(*bottom, *c.score) : *c.score;
        }
        if (!top)
            continue;
        const double tolerance = 1e-9 * std::max(std::abs(*top), std::abs(*bottom)) + 1e-300;
        if (*top - *bottom <= tolerance)
            continue;
        QStringList bestTexts;
        for (std::size_t ci = 0; ci < columns.size(); ++ci) {
            best[r][ci] = cells[r][ci].score && *top - *cells[r][ci].score <= tolerance;
            if (best[r][ci])
                bestTexts << cells[r][ci].text;
        }
        // A value that reads the same as the best is marked too, and a row whose values all
        // read the same marks none: the marks never contradict what is shown.
        bool allBest = true;
        for (std::size_t ci = 0; ci < columns.size(); ++ci) {
            if (!cells[r][ci].score)
                continue;
            best[r][ci] = best[r][ci] || bestTexts.contains(cells[r][ci].text);
            allBest = allBest && best[r][ci];
        }
        if (allBest)
            std::fill(best[r].begin(), best[r].end(), false);
    }

    m_table->setUpdatesEnabled(false);
    if (m_table->rowCount() != int(rows.size()))
        m_table->setRowCount(int(rows.size()));
    if (m_table->columnCount() != int(columns.size()))
        m_table->setColumnCount(int(columns.size()));
    for (std::size_t r = 0; r < rows.size(); ++r) {
        QTableWidgetItem *h = m_table->verticalHeaderItem(int(r));
        if (!h) {
            h = new QTableWidgetItem;
            m_table->setVerticalHeaderItem(int(r), h);
        }
        if (h->text() != rows[r].title)
            h->setText(rows[r].title);
        const QString tip = rows[r].best.isEmpty()
            ? (r < partIds.size() ? tr("part value") : tr("not ranked"))
            : tr("★ marks the best: %1").arg(rows[r].best);
        if (h->toolTip() != tip)
            h->setToolTip(tip);
    }
    for (std::size_t ci = 0; ci < columns.size(); ++ci) {
        const Column &col = columns[ci];
        QTableWidgetItem *h = m_table->horizontalHeaderItem(int(ci));
        if (!h) {
            h = new QTableWidgetItem;
            m_table->setHorizontalHeaderItem(int(ci), h);
        }
        const QString title = col.stale ? col.name + QStringLiteral(" …") : col.name;
        if (h->text() != title)
            h->setText(title);
        QString tip;
        if (col.candidate) {
            QStringList values;
            for (const auto &[id, v] : col.candidate->values)
                values << toQString(id) + QStringLiteral(" = ")
                        + toQString(v.text.empty() ? formatEngineering(v.si, 3) : v.text);
            tip = tr("Candidate \"%1\": %2\nOverlay curves drawn in this colour and dash.")
                      .arg(col.name, values.join(QStringLiteral(", ")));
            // The icon is drawn once per column position (setting one relayouts the header).
            if (h->data(Qt::UserRole + 1).toInt() != int(ci)) {
                h->setIcon(styleIcon(int(ci) - 1));
                h->setData(Qt::UserRole + 1, int(ci));
            }
        } else {
            tip = tr("The design as it is now");
            if (h->data(Qt::UserRole + 1).toInt() != 0) {
                h->setIcon(QIcon());
                h->setData(Qt::UserRole + 1, 0);
            }
        }
        if (col.stale)
            tip += tr("\n(updating: the numbers shown are from before the last edit)");
        if (h->toolTip() != tip)
            h->setToolTip(tip);
        if (h->data(Qt::UserRole).toString() != col.name)
            h->setData(Qt::UserRole, col.name);
        for (std::size_t r = 0; r < rows.size(); ++r) {
            const Cell &cell = cells[r][ci];
            QTableWidgetItem *item = m_table->item(int(r), int(ci));
            if (!item) {
                item = new QTableWidgetItem;
                item->setTextAlignment(Qt::AlignRight | Qt::AlignVCenter);
                m_table->setItem(int(r), int(ci), item);
            }
            const bool isBest = best[r][ci];
            const QString text = isBest ? kBestMarker + QStringLiteral(" ") + cell.text : cell.text;
            if (item->text() != text)
                item->setText(text);
            QString cellTip = cell.tip;
            if (isBest)
                cellTip += (cellTip.isEmpty() ? QString() : QStringLiteral("\n"))
                    + tr("★ best in this row: %1").arg(rows[r].best);
            if (item->toolTip() != cellTip)
                item->setToolTip(cellTip);
            QFont f = m_table->font();
            f.setBold(isBest);
            f.setItalic(cell.inherited);
            if (item->font() != f)
                item->setFont(f);
            if (item->data(Qt::UserRole).toBool() != isBest)
                item->setData(Qt::UserRole, isBest);
            QColor fg = palette().color(QPalette::Text);
            if (cell.verdict > 0)
                fg = QColor(0x00, 0x73, 0x4f);
            else if (cell.verdict < 0)
                fg = QColor(0xb3, 0x26, 0x1e);
            else if (cell.inherited || col.stale)
                fg = QColor(0x80, 0x86, 0x90);
            if (item->foreground().color() != fg)
                item->setForeground(fg);
        }
    }
    m_table->setUpdatesEnabled(true);

    if (m_message.isEmpty()) {
        if (design.candidates.empty())
            setStatus(
                tr("No candidates yet: \"Pin as candidate…\" stores the current part values."));
        else if (!m_missing.empty() || m_busy)
            setStatus(tr("updating after the edits settle…"));
        else
            setStatus(tr("%n candidate(s); last analysed in %1 ms", nullptr,
                         int(design.candidates.size()))
                          .arg(m_lastComputeMs, 0, 'f', 1));
    }
    updateActions();
}

void CandidatesPanel::setStatus(const QString &text)
{
    if (m_status->text() != text)
        m_status->setText(text);
}

QString CandidatesPanel::statusText() const
{
    flush();
    return m_status->text();
}

QStringList CandidatesPanel::columnNames() const
{
    flush();
    QStringList names;
    for (int c = 0; c < m_table->columnCount(); ++c)
        names << m_table->horizontalHeaderItem(c)->data(Qt::UserRole).toString();
    return names;
}

QStringList CandidatesPanel::rowNames() const
{
    flush();
    QStringList names;
    for (int r = 0; r < m_table->rowCount(); ++r)
        names << m_table->verticalHeaderItem(r)->text();
    return names;
}

namespace {

QTableWidgetItem *findCell(const QTableWidget *table, const QStringList &rows,
                           const QStringList &columns, const QString &row, const QString &column)
{
    const int r = int(rows.indexOf(row));
    const int c = int(columns.indexOf(column));
    return r < 0 || c < 0 ? nullptr : table->item(r, c);
}

} // namespace

QString CandidatesPanel::cellText(const QString &row, const QString &column) const
{
    flush();
    const QTableWidgetItem *item = findCell(m_table, rowNames(), columnNames(), row, column);
    if (!item)
        return {};
    QString text = item->text();
    if (text.startsWith(kBestMarker + QStringLiteral(" ")))
        text = text.mid(kBestMarker.size() + 1);
    return text;
}

QString CandidatesPanel::cellToolTip(const QString &row, const QString &column) const
{
    flush();
    const QTableWidgetItem *item = findCell(m_table, rowNames(), columnNames(), row, column);
    return item ? item->toolTip() : QString();
}

bool CandidatesPanel::isBest(const QString &row, const QString &column) const
{
    flush();
    const QTableWidgetItem *item = findCell(m_table, rowNames(), columnNames(), row, column);
    return item && item->data(Qt::UserRole).toBool();
}

bool CandidatesPanel::selectCandidate(const QString &name)
{
    flush();
    const int c = int(columnNames().indexOf(name));
    if (c <= 0)
        return false;
    m_table->setCurrentCell(0, c);
    m_table->selectColumn(c);
    updateActions();
    return true;
}

QString CandidatesPanel::selectedCandidate() const
{
    flush();
    const auto ranges = m_table->selectedRanges();
    if (ranges.isEmpty())
        return {};
    const int c = ranges.front().leftColumn();
    if (c <= 0 || c >= m_table->columnCount())
        return {};
    return m_table->horizontalHeaderItem(c)->data(Qt::UserRole).toString();
}

void CandidatesPanel::updateActions()
{
    const bool any = !selectedCandidate().isEmpty();
    m_rename->setEnabled(any);
    m_delete->setEnabled(any);
    m_makeCurrent->setEnabled(any);
}

void CandidatesPanel::pinWithDialog()
{
    QString name = m_document->nextCandidateName();
    QString reason;
    for (;;) {
        bool ok = false;
        name = QInputDialog::getText(this, tr("Pin as candidate"),
                                     reason + tr("Name for the current part values:"),
                                     QLineEdit::Normal, name, &ok);
        if (!ok)
            return;
        QString error;
        if (m_document->pinCandidate(name, &error)) {
            m_table->setFocus();
            selectCandidate(name.trimmed());
            return;
        }
        reason = error + QStringLiteral("\n\n");
    }
}

void CandidatesPanel::renameWithDialog()
{
    const QString from = selectedCandidate();
    if (from.isEmpty())
        return;
    QString name = from;
    QString reason;
    for (;;) {
        bool ok = false;
        name = QInputDialog::getText(this, tr("Rename candidate"),
                                     reason + tr("New name for \"%1\":").arg(from),
                                     QLineEdit::Normal, name, &ok);
        if (!ok)
            return;
        QString error;
        if (m_document->renameCandidate(from, name, &error)) {
            m_table->setFocus();
            selectCandidate(name.trimmed());
            return;
        }
        reason = error + QStringLiteral("\n\n");
    }
}

void CandidatesPanel::deleteSelected()
{
    const QString name = selectedCandidate();
    if (name.isEmpty())
        return;
    const int column = int(columnNames().indexOf(name));
    m_document->deleteCandidate(name);
    if (m_table->columnCount() > 1)
        m_table->selectColumn(std::clamp(column, 1, m_table->columnCount() - 1));
}

void CandidatesPanel::makeSelectedCurrent()
{
    const QString name = selectedCandidate();
    if (name.isEmpty())
        return;
    QString error;
    if (!m_document->makeCandidateCurrent(name, &error)) {
        m_message = error;
        setStatus(error);
        return;
    }
    m_message.clear();
}

} // namespace loopsketch::ui
