#pragma once

// The Inspector: every numeric field of the selected part, parsed by core. Invalid text
// marks the field red and says why; the design keeps its last valid value.

#include <QString>
#include <QWidget>

#include <map>
#include <string>

class QComboBox;
class QLabel;
class QLineEdit;
class QFormLayout;

namespace loopsketch {
struct Part;
}

namespace loopsketch::ui {

class DesignDocument;

class Inspector : public QWidget
{
    Q_OBJECT

public:
    explicit Inspector(DesignDocument *document, QWidget *parent = nullptr);

    /// Shows the part `partId`; empty shows a hint.
    void showPart(const std::string &partId);
    const std::string &partId() const { return m_partId; }
    /// Refreshes the shown values (after an edit or undo) without touching fields in error.
    void refresh();

    QLineEdit *fieldEdit(const std::string &field) const;
    QComboBox *seriesChooser() const { return m_series; }
    QComboBox *toleranceChooser() const { return m_tolerance; }
    /// The gain block's preset box ("custom" or the preset in effect); nullptr otherwise.
    QComboBox *presetChooser() const { return m_presets; }
    QLineEdit *nameEdit() const { return m_name; }
    /// The label of a field's row ("open-loop gain", "poles (Hz)" ...).
    QString fieldLabel(const std::string &field) const;
    /// The message shown for the field's last invalid text, empty when it is valid.
    QString fieldError(const std::string &field) const;

private:
    void commitField(const std::string &field);
    void commitTolerance();
    // The rows of showPart() beyond the part's own fields: the E-series and tolerance of a
    // part with a primary value, the gain block's pole and zero lists and presets.
    void addSeriesRows(QFormLayout *form, const Part &part);
    void addGainBlockRows(QFormLayout *form, const Part &part);
    void markError(QWidget *widget, QLabel *label, const QString &message);

    DesignDocument *m_document;
    std::string m_partId;
    QWidget *m_form = nullptr;
    QLabel *m_header = nullptr;
    std::map<std::string, QLineEdit *> m_edits;
    std::map<std::string, QLabel *> m_errors;
    QComboBox *m_series = nullptr;
    QComboBox *m_tolerance = nullptr;
    QLabel *m_toleranceError = nullptr;
    QComboBox *m_presets = nullptr;
    QLineEdit *m_name = nullptr;
    QLabel *m_nameError = nullptr;
};

} // namespace loopsketch::ui
