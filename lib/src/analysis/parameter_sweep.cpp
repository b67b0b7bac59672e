// Parameter sweeps: a study per point of one or two settings, all with the same seed.
#include "lotwise/parameter_sweep.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <sstream>

#include "lotwise/error.hpp"
#include "lotwise/study.hpp"
#include "variation/sampler.hpp"

namespace lotwise {

const char* to_string(SweepSetting setting) {
  switch (setting) {
    case SweepSetting::nominal: return "nominal";
    case SweepSetting::tolerance: return "tolerance";
  }
  return "?";
}

namespace {

void apply(Design& design, const ParameterSweepAxis& axis, double value) {
  const std::vector<std::size_t> chosen = detail::resolve_names(design.circuit, {axis.parameter});
  if (axis.setting == SweepSetting::nominal) {
    for (const std::size_t i : chosen) {
      design.circuit.set_nominal(design.circuit.parameters()[i].name, value);
    }
    return;
  }
  bool any = false;
  for (Variation& v : design.variations) {
    const std::vector<std::size_t> covered = detail::resolve_targets(design.circuit, v);
    const bool hit = std::any_of(covered.begin(), covered.end(), [&](std::size_t i) {
      return std::find(chosen.begin(), chosen.end(), i) != chosen.end();
    });
    if (!hit) continue;
    v.tolerance = value;
    any = true;
  }
  if (!any) {
    throw DesignError("sweep: no variation covers '" + axis.parameter +
                      "', so its tolerance cannot be swept");
  }
}

}  // namespace

ParameterSweepResult sweep_parameters(const Design& design,
                                      const std::vector<ParameterSweepAxis>& axes,
                                      const RunOptions& options) {
  if (axes.empty() || axes.size() > 2) throw DesignError("a sweep takes one or two axes");
  for (const auto& axis : axes) {
    if (axis.values.empty()) {
      throw DesignError("sweep of '" + axis.parameter + "': give at least one value");
    }
  }
  ParameterSweepResult out;
  out.axes = axes;
  const std::size_t inner = axes.size() == 2 ? axes[1].values.size() : 1;
  for (std::size_t a = 0; a < axes[0].values.size(); ++a) {
    for (std::size_t b = 0; b < inner; ++b) {
      Design d = design;
      ParameterSweepPoint point;
      apply(d, axes[0], axes[0].values[a]);
      point.settings.push_back(axes[0].values[a]);
      if (axes.size() == 2) {
        apply(d, axes[1], axes[1].values[b]);
        point.settings.push_back(axes[1].values[b]);
      }
      const Study study(std::move(d));
      point.result = study.run(options);
      out.points.push_back(std::move(point));
    }
  }
  return out;
}

std::string sweep_table(const ParameterSweepResult& sweep) {
  std::ostringstream out;
  char buf[64];
  for (const auto& axis : sweep.axes) {
    std::snprintf(buf, sizeof buf, "%-14s", (axis.parameter + " " + to_string(axis.setting)).c_str());
    out << buf << " ";
  }
  out << "yield       interval              ";
  if (!sweep.points.empty()) {
    for (const auto& m : sweep.points[0].result.measurements) {
      std::snprintf(buf, sizeof buf, "%-24s", (m.name + " mean/sd").c_str());
      out << buf;
    }
  }
  out << "\n";
  for (const auto& p : sweep.points) {
    for (const double v : p.settings) {
      std::snprintf(buf, sizeof buf, "%-14.6g ", v);
      out << buf;
    }
    const YieldResult& r = p.result;
    std::snprintf(buf, sizeof buf, "%8.4f %%  [%7.3f, %7.3f] %%   ", 100.0 * r.yield,
                  100.0 * r.interval.low, 100.0 * r.interval.high);
    out << buf;
    for (const auto& m : r.measurements) {
      std::snprintf(buf, sizeof buf, "%-11.5g %-11.4g  ", m.stats.mean(), m.stats.std_dev());
      out << buf;
    }
    out << "\n";
  }
  return out.str();
}

}  // namespace lotwise
