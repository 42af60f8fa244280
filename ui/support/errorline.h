#pragma once

// The error line under an editable field (small red text, hidden while the field is valid, the
// same in the Inspector and the design properties) and a panel's status line in the same red.

#include <QLabel>
#include <QVBoxLayout>
#include <QWidget>

namespace loopsketch::ui {

/// A box holding `editor` with a hidden error line under it (a child of the editor's parent);
/// `error` is set to the line. The caller puts the box in its form.
QVBoxLayout *withErrorLine(QWidget *editor, QLabel *&error);

/// Shows `text` on a status line, in the error colour when `error`.
void showStatus(QLabel *line, const QString &text, bool error);

} // namespace loopsketch::ui
