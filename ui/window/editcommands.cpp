#include "window/editcommands.h"

#include "support/qtadapter.h"
#include "window/designdocument.h"

namespace loopsketch::ui {

SetFieldCommand::SetFieldCommand(DesignDocument *document, std::string partId, std::string field,
                                 std::optional<Value> before, std::optional<Value> after,
                                 bool burst)
    : m_document(document), m_partId(std::move(partId)), m_field(std::move(field)),
      m_before(std::move(before)), m_after(std::move(after)), m_burst(burst),
      m_time(std::chrono::steady_clock::now())
{
    setText(QObject::tr("Set %1 %2 to %3")
                .arg(toQString(m_partId), toQString(m_field),
                     m_after ? toQString(m_after->text) : QObject::tr("default")));
}

bool SetFieldCommand::mergeWith(const QUndoCommand *other)
{
    const auto *next = dynamic_cast<const SetFieldCommand *>(other);
    if (!next || !next->m_burst || next->m_partId != m_partId || next->m_field != m_field)
        return false;
    if (next->m_time - m_time > kBurstGap)
        return false;
    m_after = next->m_after;
    m_time = next->m_time;
    setText(next->text());
    setObsolete(m_after == m_before);
    return true;
}

void SetFieldCommand::redo()
{
    m_document->applyField(m_partId, m_field, m_after);
}

void SetFieldCommand::undo()
{
    m_document->applyField(m_partId, m_field, m_before);
}

SetSeriesCommand::SetSeriesCommand(DesignDocument *document, std::string partId,
                                   std::optional<ESeries> before, std::optional<ESeries> after)
    : m_document(document), m_partId(std::move(partId)), m_before(before), m_after(after)
{
    setText(QObject::tr("Set %1 series").arg(toQString(m_partId)));
}

void SetSeriesCommand::redo()
{
    m_document->applySeries(m_partId, m_after);
}

void SetSeriesCommand::undo()
{
    m_document->applySeries(m_partId, m_before);
}

SetToleranceCommand::SetToleranceCommand(DesignDocument *document, std::string partId,
                                         std::optional<Value> before, std::optional<Value> after)
    : m_document(document), m_partId(std::move(partId)), m_before(std::move(before)),
      m_after(std::move(after))
{
    setText(QObject::tr("Set %1 tolerance").arg(toQString(m_partId)));
}

void SetToleranceCommand::redo()
{
    m_document->applyTolerance(m_partId, m_after);
}

void SetToleranceCommand::undo()
{
    m_document->applyTolerance(m_partId, m_before);
}

SetFrequencyListCommand::SetFrequencyListCommand(DesignDocument *document, std::string partId,
                                                 std::string list, std::vector<Value> before,
                                                 std::vector<Value> after)
    : m_document(document), m_partId(std::move(partId)), m_list(std::move(list)),
      m_before(std::move(before)), m_after(std::move(after))
{
    setText(QObject::tr("Set %1 %2").arg(toQString(m_partId), toQString(m_list)));
}

void SetFrequencyListCommand::redo()
{
    m_document->applyFrequencyList(m_partId, m_list, m_after);
}

void SetFrequencyListCommand::undo()
{
    m_document->applyFrequencyList(m_partId, m_list, m_before);
}

SetDesignCommand::SetDesignCommand(DesignDocument *document, Design before, Design after,
                                   const QString &text)
    : m_document(document), m_before(std::move(before)), m_after(std::move(after))
{
    setText(text);
}

void SetDesignCommand::redo()
{
    m_document->applyDesign(m_after);
}

void SetDesignCommand::undo()
{
    m_document->applyDesign(m_before);
}

SetSketchCommand::SetSketchCommand(DesignDocument *document, std::optional<SketchLayout> before,
                                   std::optional<SketchLayout> after, const QString &text)
    : m_document(document), m_before(std::move(before)), m_after(std::move(after))
{
    setText(text);
}

void SetSketchCommand::redo()
{
    m_document->applySketch(m_after);
}

void SetSketchCommand::undo()
{
    m_document->applySketch(m_before);
}

SetCandidatesCommand::SetCandidatesCommand(DesignDocument *document, std::vector<Candidate> before,
                                           std::vector<Candidate> after, const QString &text)
    : m_document(document), m_before(std::move(before)), m_after(std::move(after))
{
    setText(text);
}

void SetCandidatesCommand::redo()
{
    m_document->applyCandidates(m_after);
}

void SetCandidatesCommand::undo()
{
    m_document->applyCandidates(m_before);
}

} // namespace loopsketch::ui
