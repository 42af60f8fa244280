#include "window/partclipboard.h"

#include "loopsketch/design/designfile.h"

#include <QMimeData>

namespace loopsketch::ui {

Design copyParts(const Design &design, const SketchLayout &layout,
                 const std::vector<std::string> &partIds)
{
    Design fragment;
    fragment.sketch.emplace();
    for (const Part &p : design.parts) {
        if (std::find(partIds.begin(), partIds.end(), p.id) == partIds.end())
            continue;
        fragment.parts.push_back(p);
        if (const auto it = layout.parts.find(p.id); it != layout.parts.end())
            fragment.sketch->parts[p.id] = it->second;
    }
    return fragment;
}

QMimeData *partsMimeData(const Design &fragment)
{
    const QByteArray text = QByteArray::fromStdString(serializeDesign(fragment));
    auto *data = new QMimeData;
    data->setData(QString::fromLatin1(kPartsMimeType), text);
    data->setText(QString::fromUtf8(text));
    return data;
}

std::optional<Design> partsFromMimeData(const QMimeData *data)
{
    if (!data || !data->hasFormat(QString::fromLatin1(kPartsMimeType)))
        return std::nullopt;
    const QByteArray text = data->data(QString::fromLatin1(kPartsMimeType));
    auto parsed = parseDesign(text.toStdString(), DesignRules::Draft, "clipboard");
    if (!parsed || parsed->parts.empty())
        return std::nullopt;
    return std::move(parsed).value();
}

} // namespace loopsketch::ui
