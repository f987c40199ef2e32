// File: daemon/charts/palette.h
//
// The colours, dash patterns and markers every Plumbline chart draws with,
// so the model-health page and the refit dossier look alike. Colours come
// from the Okabe–Ito set, published as safe for the common colour-vision
// deficiencies: Okabe, M. and Ito, K. (2008), "Color Universal Design (CUD):
// how to make figures and presentations that are friendly to colorblind
// people", https://jfly.uni-koeln.de/color/ (first published 2002).
// Colour never carries meaning alone: each series also has its own dash
// pattern and marker shape, each state its own fill pattern and its name in
// words, so a chart printed in black and white still reads.
//
//   const SeriesStyle& s = SeriesStyleAt(1);  // candidate: vermilion, dashed
//   writer.Leaf("path", {{"stroke", s.colour}, {"stroke-dasharray", s.dash}});
//
// Thread-safe: constants only.
#ifndef PLUMBLINE_DAEMON_CHARTS_PALETTE_H_
#define PLUMBLINE_DAEMON_CHARTS_PALETTE_H_

#include <cstddef>

namespace plumbline::charts {

// Okabe–Ito colours (sRGB hex, as published).
inline constexpr char kBlack[] = "#000000";
inline constexpr char kOrange[] = "#E69F00";
inline constexpr char kSkyBlue[] = "#56B4E9";
inline constexpr char kBluishGreen[] = "#009E73";
inline constexpr char kYellow[] = "#F0E442";
inline constexpr char kBlue[] = "#0072B2";
inline constexpr char kVermilion[] = "#D55E00";
inline constexpr char kReddishPurple[] = "#CC79A7";

// Neutrals of our own for text and scaffolding; text stays near black for
// contrast well above WCAG AA on the white background.
inline constexpr char kInk[] = "#1A1A1A";         // titles, labels, numbers
inline constexpr char kMutedInk[] = "#4D4D4D";    // subtitles, tick labels
inline constexpr char kAxis[] = "#333333";        // axis lines
inline constexpr char kGrid[] = "#DDDDDD";        // grid lines
inline constexpr char kReference[] = "#666666";   // diagonal, baseline
inline constexpr char kPaper[] = "#FFFFFF";       // chart background
inline constexpr char kNoDataFill[] = "#F2F2F2";  // 'no data' panel, gaps

// Generic font stack: nothing is loaded from anywhere.
inline constexpr char kFontFamily[] =
    "DejaVu Sans, Verdana, Helvetica, Arial, sans-serif";

enum class Marker { kCircle, kSquare, kTriangle, kDiamond };

// How the i-th series of a chart is drawn. Series 0 is the active version
// (or the only series), series 1 the candidate.
struct SeriesStyle {
  const char* colour;
  const char* dash;  // stroke-dasharray; "none" for a solid line
  Marker marker;
  bool hollow_marker;  // outlined marker (white fill) for a second look
};

inline constexpr SeriesStyle kSeriesStyles[] = {
    {kBlue, "none", Marker::kCircle, false},
    {kVermilion, "7 4", Marker::kSquare, true},
    {kBluishGreen, "2 3", Marker::kTriangle, false},
    {kReddishPurple, "9 3 2 3", Marker::kDiamond, true},
};
inline constexpr size_t kMaxSeries =
    sizeof(kSeriesStyles) / sizeof(kSeriesStyles[0]);

// REQUIRES: i < kMaxSeries.
inline const SeriesStyle& SeriesStyleAt(size_t i) { return kSeriesStyles[i]; }

// The drift policy's levels (daemon/drift_policy.h), as charts draw them.
enum class Level { kSteady, kWatch, kDrifting };

struct LevelStyle {
  const char* name;    // the state in words, as plumbctl prints it
  const char* colour;  // bar fill and threshold line colour
  const char* dash;    // threshold line pattern
  // Fill pattern over the colour, for black and white prints: none, sparse
  // diagonal hatch, dense cross hatch.
  const char* pattern;
};

inline constexpr LevelStyle kLevelStyles[] = {
    {"steady", kBluishGreen, "none", "none"},
    {"watch", kOrange, "6 3", "hatch"},
    {"drifting", kVermilion, "2 2", "cross"},
};

inline const LevelStyle& LevelStyleOf(Level level) {
  return kLevelStyles[static_cast<size_t>(level)];
}

}  // namespace plumbline::charts

#endif  // PLUMBLINE_DAEMON_CHARTS_PALETTE_H_
