#include "panels/candidatespanel.h"

#include "support/qtadapter.h"
#include "window/designdocument.h"

#include "loopsketch/analysis/spread.h"
#include "loopsketch/analysis/trialmetrics.h"
#include "loopsketch/base/value.h"
#include "loopsketch/report/candidatecomparison.h"

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
    AnalysisOptions options; // noise on: the comparison has noise rows, the Noise panel overlays
    options.sensitivity = false;
    auto analysis = analyze(key, {}, options);
    if (analysis)
        c->analysis = std::make_shared<const Analysis>(std::move(analysis).value());
    else
        c->problem = toQString(analysis.errorText());
    ComparisonWorstCase &w = c->worst;
    for (const Part &p : key.parts)
        w.hasTolerances = w.hasTolerances || (p.tolerance && !p.primaryField().empty());
    if (w.hasTolerances && c->analysis) {
        SpreadOptions spread;
        spread.threads = 1; // the GUI thread keeps the other core
        auto worst = worstCase(key, spread);
        if (worst) {
            w.min = worst->gain.min;
            w.max = worst->gain.max;
            w.exhaustive = worst->exhaustive;
            w.corners = worst->corners;
        } else {
            w.problem = worst.errorText();
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

std::vector<ComparisonInput> CandidatesPanel::comparisonInputs(std::vector<bool> *stale) const
{
    const Design &design = m_document->design();
    const bool analysed = m_document->lastDiagnostics().isEmpty() && m_document->analysis();
    ComparisonInput current{toStdString(kCurrentColumn),
                            nullptr,
                            analysed ? m_document->analysis() : nullptr,
                            {},
                            std::nullopt};
    if (!analysed)
        current.problem = m_document->lastDiagnostics().isEmpty()
            ? "not analysed yet"
            : toStdString(m_document->lastDiagnostics());
    if (m_currentWorst)
        current.worstCase = m_currentWorst->worst;
    std::vector<ComparisonInput> inputs{std::move(current)};
    stale->assign(1, !m_currentWorst || m_currentWorst->key != keyOf(design));
    for (const Candidate &c : design.candidates) {
        ComparisonInput col{c.name, &c, nullptr, "being analysed", std::nullopt};
        const auto it = m_shown.find(c.name);
        const bool known = it != m_shown.end() && it->second;
        if (known) {
            col.analysis = it->second->analysis.get();
            col.problem = toStdString(it->second->problem);
            col.worstCase = it->second->worst;
        }
        stale->push_back(!known || it->second->key != keyOf(designWithCandidate(design, c)));
        inputs.push_back(std::move(col));
    }
    return inputs;
}

void CandidatesPanel::fillTable()
{
    m_tableDirty = false;
    const Design &design = m_document->design();
    std::vector<bool> stale;
    const CandidateComparison comparison = compareCandidates(design, comparisonInputs(&stale));
    m_table->setUpdatesEnabled(false);
    const int rows = int(comparison.rows.size()), columns = int(comparison.columns.size());
    if (m_table->rowCount() != rows)
        m_table->setRowCount(rows);
    if (m_table->columnCount() != columns)
        m_table->setColumnCount(columns);
    for (int r = 0; r < rows; ++r)
        setRowHeader(r, comparison.rows[std::size_t(r)]);
    for (int c = 0; c < columns; ++c) {
        const Candidate *candidate = c > 0 ? &design.candidates[std::size_t(c - 1)] : nullptr;
        setColumnHeader(c, toQString(comparison.columns[std::size_t(c)]), candidate,
                        stale[std::size_t(c)]);
        for (int r = 0; r < rows; ++r)
            setCell(r, c, comparison.rows[std::size_t(r)], stale[std::size_t(c)]);
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

void CandidatesPanel::setRowHeader(int r, const ComparisonRow &row)
{
    QTableWidgetItem *h = m_table->verticalHeaderItem(r);
    if (!h) {
        h = new QTableWidgetItem;
        m_table->setVerticalHeaderItem(r, h);
    }
    const QString title = toQString(row.title);
    if (h->text() != title)
        h->setText(title);
    const QString tip = !row.best.empty() ? tr("★ marks the best: %1").arg(toQString(row.best))
        : row.kind == ComparisonRowKind::PartValue
        ? tr("part value")
        : tr("not ranked: no spec says which way is better");
    if (h->toolTip() != tip)
        h->setToolTip(tip);
}

void CandidatesPanel::setColumnHeader(int c, const QString &name, const Candidate *candidate,
                                      bool stale)
{
    QTableWidgetItem *h = m_table->horizontalHeaderItem(c);
    if (!h) {
        h = new QTableWidgetItem;
        m_table->setHorizontalHeaderItem(c, h);
    }
    const QString title = stale ? name + QStringLiteral(" …") : name;
    if (h->text() != title)
        h->setText(title);
    QString tip = tr("The design as it is now");
    // The icon is drawn once per column position (setting one relayouts the header).
    const int iconFor = candidate ? c : 0;
    if (h->data(Qt::UserRole + 1).toInt() != iconFor) {
        h->setIcon(candidate ? styleIcon(c - 1) : QIcon());
        h->setData(Qt::UserRole + 1, iconFor);
    }
    if (candidate) {
        QStringList values;
        for (const auto &[id, v] : candidate->values)
            values << toQString(id) + QStringLiteral(" = ")
                    + toQString(v.text.empty() ? formatEngineering(v.si, 3) : v.text);
        tip = tr("Candidate \"%1\": %2\nOverlay curves drawn in this colour and dash.")
                  .arg(name, values.join(QStringLiteral(", ")));
    }
    if (stale)
        tip += tr("\n(updating: the numbers shown are from before the last edit)");
    if (h->toolTip() != tip)
        h->setToolTip(tip);
    if (h->data(Qt::UserRole).toString() != name)
        h->setData(Qt::UserRole, name);
}

void CandidatesPanel::setCell(int r, int c, const ComparisonRow &row, bool stale)
{
    const ComparisonCell &cell = row.cells[std::size_t(c)];
    QTableWidgetItem *item = m_table->item(r, c);
    if (!item) {
        item = new QTableWidgetItem;
        item->setTextAlignment(Qt::AlignRight | Qt::AlignVCenter);
        m_table->setItem(r, c, item);
    }
    const QString text = cell.best ? kBestMarker + QStringLiteral(" ") + toQString(cell.text)
                                   : toQString(cell.text);
    if (item->text() != text)
        item->setText(text);
    QString tip = toQString(cell.note);
    if (cell.best)
        tip += (tip.isEmpty() ? QString() : QStringLiteral("\n"))
            + tr("★ best in this row: %1").arg(toQString(row.best));
    if (item->toolTip() != tip)
        item->setToolTip(tip);
    QFont f = m_table->font();
    f.setBold(cell.best);
    f.setItalic(cell.inherited);
    if (item->font() != f)
        item->setFont(f);
    if (item->data(Qt::UserRole).toBool() != cell.best)
        item->setData(Qt::UserRole, cell.best);
    QColor fg = palette().color(QPalette::Text);
    if (cell.verdict == ComparisonVerdict::Pass)
        fg = QColor(0x00, 0x73, 0x4f);
    else if (cell.verdict == ComparisonVerdict::Fail)
        fg = QColor(0xb3, 0x26, 0x1e);
    else if (cell.inherited || stale)
        fg = QColor(0x80, 0x86, 0x90);
    if (item->foreground().color() != fg)
        item->setForeground(fg);
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

void CandidatesPanel::askForName(const QString &title, const QString &prompt, QString name,
                                 const std::function<bool(const QString &, QString *)> &accept)
{
    QString reason;
    for (;;) {
        bool ok = false;
        name = QInputDialog::getText(this, title, reason + prompt, QLineEdit::Normal, name, &ok);
        if (!ok)
            return;
        QString error;
        if (accept(name, &error)) {
            m_table->setFocus();
            selectCandidate(name.trimmed());
            return;
        }
        reason = error + QStringLiteral("\n\n");
    }
}

void CandidatesPanel::pinWithDialog()
{
    askForName(tr("Pin as candidate"), tr("Name for the current part values:"),
               m_document->nextCandidateName(), [this](const QString &name, QString *error) {
                   return m_document->pinCandidate(name, error);
               });
}

void CandidatesPanel::renameWithDialog()
{
    const QString from = selectedCandidate();
    if (from.isEmpty())
        return;
    askForName(tr("Rename candidate"), tr("New name for \"%1\":").arg(from), from,
               [this, from](const QString &name, QString *error) {
                   return m_document->renameCandidate(from, name, error);
               });
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
