#pragma once

// Undoable edits of a DesignDocument. redo() applies, undo() restores; QUndoStack::push()
// calls redo() itself, so constructors never apply anything.

#include "loopsketch/design/design.h"

#include <QUndoCommand>

#include <chrono>
#include <optional>
#include <string>
#include <vector>

namespace loopsketch::ui {

class DesignDocument;

/// One numeric field of one part. A burst (wheel, arrow keys) merges consecutive steps of
/// the same field into one undo step.
class SetFieldCommand : public QUndoCommand
{
public:
    static constexpr int kBurstId = 1001;
    /// Steps closer together than this belong to one burst.
    static constexpr std::chrono::milliseconds kBurstGap{1000};

    /// A field that is nullopt is absent from the part (the spec's default applies).
    SetFieldCommand(DesignDocument *document, std::string partId, std::string field,
                    std::optional<Value> before, std::optional<Value> after, bool burst);

    int id() const override { return m_burst ? kBurstId : -1; }
    bool mergeWith(const QUndoCommand *other) override;
    void redo() override;
    void undo() override;

private:
    DesignDocument *m_document;
    std::string m_partId;
    std::string m_field;
    std::optional<Value> m_before;
    std::optional<Value> m_after;
    bool m_burst;
    std::chrono::steady_clock::time_point m_time;
};

class SetSeriesCommand : public QUndoCommand
{
public:
    SetSeriesCommand(DesignDocument *document, std::string partId, std::optional<ESeries> before,
                     std::optional<ESeries> after);
    void redo() override;
    void undo() override;

private:
    DesignDocument *m_document;
    std::string m_partId;
    std::optional<ESeries> m_before, m_after;
};

class SetToleranceCommand : public QUndoCommand
{
public:
    SetToleranceCommand(DesignDocument *document, std::string partId, std::optional<Value> before,
                        std::optional<Value> after);
    void redo() override;
    void undo() override;

private:
    DesignDocument *m_document;
    std::string m_partId;
    std::optional<Value> m_before, m_after;
};

/// The gain block's pole or zero list ("poles_hz" / "zeros_hz").
class SetFrequencyListCommand : public QUndoCommand
{
public:
    SetFrequencyListCommand(DesignDocument *document, std::string partId, std::string list,
                            std::vector<Value> before, std::vector<Value> after);
    void redo() override;
    void undo() override;

private:
    DesignDocument *m_document;
    std::string m_partId;
    std::string m_list;
    std::vector<Value> m_before, m_after;
};

/// A structural edit (add, remove, connect): the whole design before and after.
class SetDesignCommand : public QUndoCommand
{
public:
    SetDesignCommand(DesignDocument *document, Design before, Design after, const QString &text);
    void redo() override;
    void undo() override;

private:
    DesignDocument *m_document;
    Design m_before, m_after;
};

/// A change of the stored sketch layout (moving a part). Holds the whole layout before and
/// after, so the first move of an automatically laid out design undoes to "no layout".
class SetSketchCommand : public QUndoCommand
{
public:
    SetSketchCommand(DesignDocument *document, std::optional<SketchLayout> before,
                     std::optional<SketchLayout> after, const QString &text);
    void redo() override;
    void undo() override;

private:
    DesignDocument *m_document;
    std::optional<SketchLayout> m_before, m_after;
};

/// The candidate list before and after (pin, rename, delete).
class SetCandidatesCommand : public QUndoCommand
{
public:
    SetCandidatesCommand(DesignDocument *document, std::vector<Candidate> before,
                         std::vector<Candidate> after, const QString &text);
    void redo() override;
    void undo() override;

private:
    DesignDocument *m_document;
    std::vector<Candidate> m_before, m_after;
};

} // namespace loopsketch::ui
