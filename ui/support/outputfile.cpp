#include "support/outputfile.h"

#include "support/qtadapter.h"

#include "loopsketch/design/atomicfile.h"

#include <optional>

namespace loopsketch::ui {

namespace {

QString failure(const QString &path, const QString &what, const Diagnostics &diagnostics)
{
    QStringList reasons;
    for (const auto &d : diagnostics)
        reasons << toQString(d.message);
    return QStringLiteral("%1: cannot write the %2: %3").arg(path, what, reasons.join("; "));
}

/// The resolved target of `path`, checked against `input`.
std::optional<OutputTarget> resolveChecked(const QString &path, const QString &what, QString *error,
                                           const QString &input)
{
    auto target = resolveOutput(toStdString(path));
    if (!target) {
        if (error)
            *error = failure(path, what, target.diagnostics());
        return std::nullopt;
    }
    std::vector<std::string> inputs;
    if (!input.isEmpty())
        inputs.push_back(toStdString(input));
    if (auto apart = checkOutputsApart(inputs, {*target}); !apart) {
        if (error)
            *error = failure(path, what, apart.diagnostics());
        return std::nullopt;
    }
    return std::move(target).value();
}

} // namespace

bool checkOutputPath(const QString &path, const QString &what, QString *error, const QString &input)
{
    return resolveChecked(path, what, error, input).has_value();
}

bool writeOutputFile(const QString &path, const QByteArray &bytes, const QString &what,
                     QString *error, const QString &input)
{
    const auto target = resolveChecked(path, what, error, input);
    if (!target)
        return false;
    auto written = writeOutput(*target, std::string_view(bytes.constData(), bytes.size()));
    if (!written) {
        if (error)
            *error = failure(path, what, written.diagnostics());
        return false;
    }
    return true;
}

} // namespace loopsketch::ui
