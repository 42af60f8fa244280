// The command line as the review-sheet tests run it: `loopsketch` with arguments, and the
// path of a shipped example design, the page count of a PDF (pdfinfo, poppler-utils).
#pragma once

#include "clirun.h"

#include <QRegularExpression>
#include <QString>
#include <QStringList>

inline CliRun loopsketchCli(const QStringList &args)
{
    return run(QStringLiteral(LOOPSKETCH_BIN), args);
}

inline QString designPath(const char *name)
{
    return QStringLiteral(LOOPSKETCH_DESIGNS_DIR "/%1.loopsketch").arg(QLatin1String(name));
}

inline int pageCount(const QString &pdf)
{
    const CliRun info = run(QStringLiteral("pdfinfo"), {pdf});
    const auto m = QRegularExpression(QStringLiteral("Pages:\\s+(\\d+)")).match(info.out);
    return m.hasMatch() ? m.captured(1).toInt() : -1;
}
