// The document's candidate edits: pin, rename, delete and make current, each one undo step.
#include "window/designdocument.h"

#include "support/qtadapter.h"
#include "window/editcommands.h"

#include "loopsketch/design/candidate.h"

namespace loopsketch::ui {

Design designWithCandidate(const Design &design, const Candidate &candidate, QString *problem)
{
    auto applied = applyCandidate(design, candidate);
    if (!applied) {
        if (problem)
            *problem = toQString(applied.errorText());
        return design;
    }
    return std::move(applied).value();
}

QString DesignDocument::nextCandidateName() const
{
    for (int n = 1;; ++n) {
        const QString name = tr("Candidate %1").arg(n);
        if (!findCandidate(m_design, toStdString(name)))
            return name;
    }
}

QString DesignDocument::candidateNameProblem(const QString &name, const QString &ignore) const
{
    const QString trimmed = name.trimmed();
    if (trimmed.isEmpty())
        return tr("A candidate needs a name that is not empty.");
    if (trimmed != ignore.trimmed() && findCandidate(m_design, toStdString(trimmed)))
        return tr("A candidate named \"%1\" exists already; choose another name.").arg(trimmed);
    return {};
}

bool DesignDocument::pinCandidate(const QString &name, QString *error)
{
    const QString problem = candidateNameProblem(name);
    if (!problem.isEmpty()) {
        if (error)
            *error = problem;
        return false;
    }
    Candidate c;
    c.name = toStdString(name.trimmed());
    for (const Part &p : m_design.parts) {
        const std::string field(p.primaryField());
        if (field.empty() || p.type == PartType::Load)
            continue;
        const auto it = p.fields.find(field);
        c.values[p.id] = it != p.fields.end() ? it->second : Value{p.number(field), {}};
    }
    if (c.values.empty()) {
        if (error)
            *error = tr("There is no resistor, capacitor or inductor whose value could be pinned.");
        return false;
    }
    std::vector<Candidate> after = m_design.candidates;
    after.push_back(std::move(c));
    m_undoStack.push(new SetCandidatesCommand(this, m_design.candidates, std::move(after),
                                              tr("Pin candidate %1").arg(name.trimmed())));
    return true;
}

bool DesignDocument::renameCandidate(const QString &from, const QString &to, QString *error)
{
    const std::string oldName = toStdString(from);
    if (!findCandidate(m_design, oldName)) {
        if (error)
            *error = tr("There is no candidate named \"%1\".").arg(from);
        return false;
    }
    const QString problem = candidateNameProblem(to, from);
    if (!problem.isEmpty()) {
        if (error)
            *error = problem;
        return false;
    }
    const std::string newName = toStdString(to.trimmed());
    if (newName == oldName)
        return true;
    std::vector<Candidate> after = m_design.candidates;
    for (Candidate &c : after) {
        if (c.name == oldName)
            c.name = newName;
    }
    m_undoStack.push(
        new SetCandidatesCommand(this, m_design.candidates, std::move(after),
                                 tr("Rename candidate %1 to %2").arg(from, to.trimmed())));
    return true;
}

bool DesignDocument::deleteCandidate(const QString &name)
{
    std::vector<Candidate> after = m_design.candidates;
    const std::string key = toStdString(name);
    const auto removed = std::erase_if(after, [&](const Candidate &c) { return c.name == key; });
    if (removed == 0)
        return false;
    m_undoStack.push(new SetCandidatesCommand(this, m_design.candidates, std::move(after),
                                              tr("Delete candidate %1").arg(name)));
    return true;
}

bool DesignDocument::makeCandidateCurrent(const QString &name, QString *error)
{
    const Candidate *c = findCandidate(m_design, toStdString(name));
    if (!c) {
        if (error)
            *error = tr("There is no candidate named \"%1\".").arg(name);
        return false;
    }
    std::vector<std::pair<std::string, Value>> changes;
    for (const auto &[id, value] : c->values) {
        const Part *p = m_design.findPart(id);
        if (!p || p->primaryField().empty()) {
            if (error)
                *error = tr("Candidate \"%1\" changes part %2, which has no value.")
                             .arg(name, toQString(id));
            return false;
        }
        const auto it = p->fields.find(std::string(p->primaryField()));
        if (it == p->fields.end() || it->second != value)
            changes.emplace_back(id, value);
    }
    if (changes.empty()) {
        if (error)
            *error = tr("The design already has the values of candidate \"%1\".").arg(name);
        return false;
    }
    m_undoStack.beginMacro(tr("Make candidate %1 current").arg(name));
    for (const auto &[id, value] : changes) {
        const Part *p = m_design.findPart(id);
        const std::string field(p->primaryField());
        const auto it = p->fields.find(field);
        std::optional<Value> before;
        if (it != p->fields.end())
            before = it->second;
        m_undoStack.push(new SetFieldCommand(this, id, field, before, value, false));
    }
    m_undoStack.endMacro();
    return true;
}

void DesignDocument::applyCandidates(const std::vector<Candidate> &candidates)
{
    m_design.candidates = candidates;
    emit candidatesChanged();
}

} // namespace loopsketch::ui
