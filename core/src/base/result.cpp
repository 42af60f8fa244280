#include "loopsketch/base/result.h"

namespace loopsketch {

std::string Diagnostic::toString() const
{
    std::string where;
    if (!part.empty())
        where += "part " + part;
    if (!field.empty()) {
        if (!where.empty())
            where += ", ";
        where += "field " + field;
    }

    std::string text = file;
    if (!where.empty()) {
        if (!text.empty())
            text += ": ";
        text += where;
    }
    if (!message.empty()) {
        if (!text.empty())
            text += ": ";
        text += message;
    }
    return text;
}

std::string toString(const Diagnostics &diagnostics)
{
    std::string text;
    for (std::size_t i = 0; i < diagnostics.size(); ++i) {
        if (i > 0)
            text += '\n';
        text += diagnostics[i].toString();
    }
    return text;
}

} // namespace loopsketch
