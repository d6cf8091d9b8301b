#pragma once
// The house style of habcast's figures, chosen for a figure set at A4 text width (170 mm) and
// printed at 100 %: type in DejaVu Sans (Debian's fonts-dejavu-core), 10 pt bold titles, 8.5 pt
// axis titles, 7.5 pt tick labels and legends, 7 pt notes; 0.6 pt frames and ticks, 1 pt data
// lines. At those sizes every label is at least as large as a journal's minimum for printed
// figures (about 6-7 pt) while a figure still fits half a page. docs/figures.md lists them.
#include "render/figure.hpp"

namespace habcast::figure_style {

inline constexpr const char* kFontFamily = "DejaVu Sans";

inline constexpr double kTitleSize = 10.0;
inline constexpr double kSubtitleSize = 8.0;
inline constexpr double kAxisTitleSize = 8.5;
inline constexpr double kTickLabelSize = 7.5;
inline constexpr double kLegendSize = 7.5;
inline constexpr double kNoteSize = 7.0;
inline constexpr double kTickLength = 3.5;  ///< points, outside the plot area

inline constexpr Rgb kGrey{110, 110, 110};
inline constexpr Rgb kLightGrey{225, 225, 225};
inline constexpr Rgb kWhite{255, 255, 255};

inline Stroke frame() { return {kInk, 0.6, {}, 1.0}; }
inline Stroke grid() { return {kLightGrey, 0.4, {}, 1.0}; }

inline TextStyle title() { return {kTitleSize, true}; }
inline TextStyle subtitle() { return {kSubtitleSize, false, false, kGrey}; }
inline TextStyle axis_title() { return {kAxisTitleSize}; }
inline TextStyle tick_label() { return {kTickLabelSize}; }
inline TextStyle legend() { return {kLegendSize}; }
inline TextStyle legend_heading() { return {kLegendSize + 0.5, true}; }
inline TextStyle note() { return {kNoteSize, false, true, kGrey}; }

}  // namespace habcast::figure_style
