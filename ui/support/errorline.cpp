#include "support/errorline.h"

namespace loopsketch::ui {

QVBoxLayout *withErrorLine(QWidget *editor, QLabel *&error)
{
    error = new QLabel(editor->parentWidget());
    error->setStyleSheet(QStringLiteral("color: #b3261e; font-size: 8pt;"));
    error->setWordWrap(true);
    error->hide();
    auto *box = new QVBoxLayout;
    box->setSpacing(1);
    box->addWidget(editor);
    box->addWidget(error);
    return box;
}

void showStatus(QLabel *line, const QString &text, bool error)
{
    line->setText(text);
    line->setStyleSheet(error ? QStringLiteral("color: #b3261e;") : QString());
}

} // namespace loopsketch::ui
