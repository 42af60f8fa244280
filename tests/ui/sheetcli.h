// The command line as the review-sheet tests run it: `loopsketch` with arguments, and the
// path of a shipped example design, an example's text edited into a file of the test's own,
// the page count of a PDF (pdfinfo, poppler-utils).
#pragma once

#include "clirun.h"

#include <QByteArray>
#include <QFile>
#include <QList>
#include <QRegularExpression>
#include <QString>
#include <QStringList>

#include <gtest/gtest.h>

#include <utility>

inline CliRun loopsketchCli(const QStringList &args)
{
    return run(QStringLiteral(LOOPSKETCH_BIN), args);
}

inline QString designPath(const char *name)
{
    return QStringLiteral(LOOPSKETCH_DESIGNS_DIR "/%1.loopsketch").arg(QLatin1String(name));
}

/// Writes the example design `name` to `path` with every (from, to) replacement made in its
/// text, each checked to be there first; false (with the failure added) when a step fails.
inline bool writeEditedDesign(const char *name, const QString &path,
                              const QList<std::pair<QByteArray, QByteArray>> &replacements)
{
    QFile in(designPath(name));
    if (!in.open(QIODevice::ReadOnly)) {
        ADD_FAILURE() << "cannot read " << name;
        return false;
    }
    QByteArray text = in.readAll();
    for (const auto &[from, to] : replacements) {
        if (!text.contains(from)) {
            ADD_FAILURE() << name << " has no " << from.toStdString();
            return false;
        }
        text.replace(from, to);
    }
    QFile out(path);
    if (!out.open(QIODevice::WriteOnly) || out.write(text) != text.size()) {
        ADD_FAILURE() << "cannot write " << path.toStdString();
        return false;
    }
    return true;
}

inline int pageCount(const QString &pdf)
{
    const CliRun info = run(QStringLiteral("pdfinfo"), {pdf});
    const auto m = QRegularExpression(QStringLiteral("Pages:\\s+(\\d+)")).match(info.out);
    return m.hasMatch() ? m.captured(1).toInt() : -1;
}
