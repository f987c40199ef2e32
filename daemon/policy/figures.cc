// File: daemon/policy/figures.cc
#include "daemon/policy/figures.h"

#include <string>

namespace plumbline::daemon {

const WindowFigure* FindWindowFigure(absl::string_view metric) {
  for (const WindowFigure& f : kWindowFigures) {
    if (f.metric == metric) return &f;
  }
  return nullptr;
}

const FeatureFigure* FindFeatureFigure(absl::string_view metric) {
  for (const FeatureFigure& f : kFeatureFigures) {
    if (f.metric == metric) return &f;
  }
  return nullptr;
}

v1::Figure DefinedFigure(double value) {
  v1::Figure f;
  f.set_defined(true);
  f.set_value(value);
  return f;
}

v1::Figure UndefinedFigure(absl::string_view note) {
  v1::Figure f;
  f.set_note(std::string(note));
  return f;
}

}  // namespace plumbline::daemon
