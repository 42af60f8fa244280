#pragma once

// The ui's door to core's output writer (loopsketch/atomicfile.h): the bytes that the Qt
// writers (QPdfWriter, QSvgGenerator, QImage) rendered into memory go to disk the way every
// other output does (atomic for regular files, direct for devices and FIFOs), with the same
// checks and messages as the command line.

#include <QByteArray>
#include <QString>

namespace loopsketch::ui {

/// Writes `bytes` to `path`. `what` names the output in the message ("review sheet").
/// `input`, when not empty, is the file the output was made from: an output that is that
/// file (another spelling, a link) is refused. On failure returns false and sets `error`
/// ("<path>: cannot write the <what>: <reason>"); the previous file stays as it was and no
/// temporary file remains.
bool writeOutputFile(const QString &path, const QByteArray &bytes, const QString &what,
                     QString *error, const QString &input = {});

/// Checks before any work that `path` can be written and is not `input`; false with `error`
/// otherwise.
bool checkOutputPath(const QString &path, const QString &what, QString *error,
                     const QString &input = {});

} // namespace loopsketch::ui
