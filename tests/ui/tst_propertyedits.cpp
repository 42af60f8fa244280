// Editing a part and the design in the designer's words: the Inspector's labels with units
// and the gain block preset in effect, renaming from it, Delete in the parts list, and the
// design properties (spot frequency, full-scale signal, noise specs) as undoable steps.

#include "blankdesigntest.h"

#include "sketch/designpropertiespanel.h"
#include "sketch/inspector.h"
#include "sketch/partspalette.h"
#include "window/designdocument.h"
#include "window/mainwindow.h"

#include "loopsketch/design/design.h"

#include <QComboBox>
#include <QLineEdit>
#include <QListWidget>
#include <QTest>

#include <gmock/gmock.h>
#include <gtest/gtest.h>

using namespace loopsketch;
using namespace loopsketch::ui;
using loopsketch::ui::test::BlankDesignTest;
using ::testing::HasSubstr;

namespace {

// ---- Inspector in the designer's words ----

TEST_F(BlankDesignTest, InspectorLabelsWithUnitsAndThePresetInEffect)
{
    window->newDesign();
    settle();
    emit window->partsPalette()->placeRequested(int(PartType::GainBlock));
    ASSERT_EQ(window->inspector()->partId(), "U1");
    Inspector *inspector = window->inspector();
    EXPECT_EQ(inspector->fieldLabel("gain"), QStringLiteral("open-loop gain"));
    EXPECT_EQ(inspector->fieldLabel("gbw"), QStringLiteral("gain-bandwidth (Hz)"));
    EXPECT_EQ(inspector->fieldLabel("poles_hz"), QStringLiteral("poles (Hz)"));
    EXPECT_EQ(inspector->fieldLabel("r_in"), QStringLiteral("input resistance (Ω)"));
    EXPECT_EQ(inspector->fieldLabel("en"), QStringLiteral("voltage noise density (V/√Hz)"));
    EXPECT_THAT(inspector->fieldEdit("r_in")->toolTip().toStdString(), HasSubstr("r_in"));

    // A new gain block has its own values (with a finite gain-bandwidth): "custom".
    QComboBox *presets = inspector->presetChooser();
    ASSERT_NE(presets, nullptr);
    EXPECT_EQ(presets->currentText(), QStringLiteral("custom"));
    // Choosing a preset keeps it shown; editing a value afterwards makes it custom again.
    presets->setCurrentIndex(2);
    emit presets->activated(2);
    EXPECT_EQ(presets->currentText(), DesignDocument::gainBlockPresets().at(1));
    EXPECT_EQ(doc()->gainBlockPresetInEffect("U1"), 1);
    type(inspector->fieldEdit("r_out"), QStringLiteral("75"));
    EXPECT_EQ(inspector->presetChooser()->currentText(), QStringLiteral("custom"));

    // Renaming from the Inspector.
    type(inspector->nameEdit(), QStringLiteral("AMP"));
    ASSERT_NE(doc()->design().findPart("AMP"), nullptr);
    EXPECT_EQ(inspector->partId(), "AMP");
}

} // namespace

namespace {

TEST_F(BlankDesignTest, DeleteKeyInThePartsListRemovesTheSelectedParts)
{
    openExample(QStringLiteral("demo.loopsketch"));
    QListWidget *list = window->partsPalette()->partList();
    list->setFocus();
    list->clearSelection();
    for (int i = 0; i < list->count(); ++i) {
        if (list->item(i)->data(Qt::UserRole).toString() == QStringLiteral("CF"))
            list->item(i)->setSelected(true);
    }
    ASSERT_EQ(list->selectedItems().size(), 1);
    QTest::keyClick(list, Qt::Key_Delete);
    EXPECT_EQ(doc()->design().findPart("CF"), nullptr);
    EXPECT_NE(doc()->design().findPart("RF"), nullptr);
    doc()->undoStack()->undo();
    EXPECT_NE(doc()->design().findPart("CF"), nullptr);
}

} // namespace

// Issue 18: the spot frequency, the full-scale signal and the noise specs are design
// properties, each one undoable step; the SNR spec asks for the signal first.
TEST_F(BlankDesignTest, NoiseSpecsSignalLevelAndSpotFrequencyAreUndoable)
{
    openExample(QStringLiteral("demo.loopsketch"));
    DesignPropertiesPanel *props = window->designProperties();
    const int before = doc()->undoStack()->count();
    type(props->edit("snr_min_db"), QStringLiteral("60"));
    EXPECT_THAT(props->error("snr_min_db").toStdString(), HasSubstr("full-scale signal"));
    EXPECT_FALSE(doc()->design().specs.snrMinDb.has_value());
    type(props->edit("signal_level"), QStringLiteral("5uA"));
    ASSERT_TRUE(doc()->design().signalLevel.has_value())
        << props->error("signal_level").toStdString();
    EXPECT_NEAR(doc()->design().signalLevel->si, 5e-6, 1e-18);
    type(props->edit("snr_min_db"), QStringLiteral("60"));
    EXPECT_TRUE(props->error("snr_min_db").isEmpty());
    ASSERT_TRUE(doc()->design().specs.snrMinDb.has_value());
    EXPECT_NEAR(*doc()->design().specs.snrMinDb, 60.0, 1e-12);
    type(props->edit("output_noise_max"), QStringLiteral("150u"));
    ASSERT_TRUE(doc()->design().specs.outputNoiseMax.has_value());
    EXPECT_NEAR(doc()->design().specs.outputNoiseMax->si, 150e-6, 1e-15);
    type(props->edit("noise_spot_hz"), QStringLiteral("10k"));
    ASSERT_TRUE(doc()->design().noiseSpotHz.has_value());
    EXPECT_NEAR(doc()->design().noiseSpotHz->si, 1e4, 1e-9);
    type(props->edit("signal_level"), QString());
    EXPECT_THAT(props->error("signal_level").toStdString(), HasSubstr("clear it first"));
    EXPECT_EQ(doc()->undoStack()->count(), before + 4);
    settle();
    ASSERT_NE(doc()->analysis(), nullptr) << doc()->lastDiagnostics().toStdString();
    const Analysis &a = *doc()->analysis();
    ASSERT_GE(a.specs.size(), 2u);
    EXPECT_EQ(a.specs[a.specs.size() - 2].name, "output_noise_max");
    EXPECT_EQ(a.specs.back().name, "snr_min_db");
    ASSERT_TRUE(a.noise);
    EXPECT_NEAR(a.noise->spot.atHz, 1e4, 1e-9);

    doc()->undoStack()->undo();
    EXPECT_FALSE(doc()->design().noiseSpotHz.has_value());
    EXPECT_TRUE(props->edit("noise_spot_hz")->text().isEmpty());
    doc()->undoStack()->undo();
    EXPECT_FALSE(doc()->design().specs.outputNoiseMax.has_value());
    doc()->undoStack()->redo();
    EXPECT_EQ(props->edit("output_noise_max")->text(), QStringLiteral("150u"));
}
