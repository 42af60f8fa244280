#pragma once

// Design properties: what belongs to the whole design rather than to one part (title,
// notes, the signal source, the output, the sweep, the temperature, the noise band, spot
// frequency and full-scale signal, and the specs). Every
// change is one undoable step; text is parsed by core and invalid text is marked red with
// the reason, leaving the design as it was (the Inspector's rule).

#include <QString>
#include <QWidget>

#include <functional>
#include <map>
#include <optional>
#include <string>

class QComboBox;
class QLabel;
class QLineEdit;
class QPlainTextEdit;
class QSpinBox;
class QVariant;

namespace loopsketch {
struct Design;
struct Value;
} // namespace loopsketch

namespace loopsketch::ui {

class DesignDocument;

class DesignPropertiesPanel : public QWidget
{
    Q_OBJECT

public:
    explicit DesignPropertiesPanel(DesignDocument *document, QWidget *parent = nullptr);

    /// Shows the document's design (after an edit, an undo or an open).
    void refresh();

    /// The editor of a property: "title", "sweep_start", "sweep_stop", "temperature",
    /// "noise_band_low", "noise_band_high",
    /// "gain_min", "gain_max", "bandwidth_min", "phase_margin_min_deg", "noise_spot_hz",
    /// "signal_level", "output_noise_max", "snr_min_db"; nullptr otherwise.
    QLineEdit *edit(const std::string &key) const;
    QPlainTextEdit *notesEdit() const { return m_notes; }
    QComboBox *inputChooser() const { return m_input; }
    QComboBox *outputChooser() const { return m_output; }
    QSpinBox *pointsPerDecade() const { return m_points; }
    /// The message shown for the property's last invalid text, empty when it is valid.
    QString error(const std::string &key) const;

protected:
    bool eventFilter(QObject *watched, QEvent *event) override;

private:
    /// On a choice in `box`, `set` writes it into a copy of the design, applied as one undo
    /// step named "<what>: <the choice's text>".
    void onChoice(QComboBox *box, const QString &what,
                  std::function<void(Design &, const QVariant &)> set);
    void commit(const std::string &key);
    // Steps of commit() for the fields read together with another: each writes `after` and
    // returns true, or shows the error and returns false.
    bool readTemperature(const QString &raw, Design &after);
    /// The loader's reading of a voltage or current property ("signal_level",
    /// "output_noise_max") into `value` (empty text: none); false, the error shown, when bad.
    bool readVoltageOrCurrent(const std::string &key, const QString &raw,
                              std::optional<Value> &value);
    bool readNoiseBand(const std::string &key, const std::optional<Value> &end, Design &after);
    void commitNotes();
    void showError(const std::string &key, const QString &message);

    DesignDocument *m_document;
    std::map<std::string, QLineEdit *> m_edits;
    std::map<std::string, QLabel *> m_errors;
    QPlainTextEdit *m_notes = nullptr;
    QComboBox *m_input = nullptr;
    QComboBox *m_output = nullptr;
    QSpinBox *m_points = nullptr;
    QLabel *m_inputHint = nullptr;
    bool m_refreshing = false;
};

} // namespace loopsketch::ui
