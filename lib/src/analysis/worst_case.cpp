// Sensitivities at nominal, extreme-value analysis, root-sum-square and corner enumeration.
#include "lotwise/worst_case.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <limits>
#include <string>
#include <vector>

#include <boost/math/constants/constants.hpp>
#include <boost/math/distributions/normal.hpp>

#include "lotwise/error.hpp"
#include "lotwise/study.hpp"
#include "variation/sampler.hpp"

namespace lotwise {
namespace {

const double nan = std::numeric_limits<double>::quiet_NaN();

double phi(double x) { return std::exp(-0.5 * x * x) / boost::math::constants::root_two_pi<double>(); }
double big_phi(double x) {
  return boost::math::cdf(boost::math::normal_distribution<double>(), x);
}

// Standard deviation of a deviation of law `kind` with tolerance t (in the unit of the
// value) and `sigmas` k; `nominal` for the log-normal law, whose spread is multiplicative.
double law_std_dev(Distribution kind, double t, double k, double inner, double nominal) {
  if (t <= 0.0) return 0.0;
  switch (kind) {
    case Distribution::normal: return t / k;
    case Distribution::uniform: return t / std::sqrt(3.0);
    case Distribution::triangular: return t / std::sqrt(6.0);
    case Distribution::truncated_normal: {
      const double s = t / k;
      return s * std::sqrt(1.0 - 2.0 * k * phi(k) / (2.0 * big_phi(k) - 1.0));
    }
    case Distribution::binned: {
      // N(0, s^2) within inner <= |x| <= t: E[x^2] from [Phi(x) - x phi(x)] over the band.
      const double s = t / k;
      const double a = inner / s;
      auto part = [](double x) { return big_phi(x) - x * phi(x); };
      return s * std::sqrt((part(k) - part(a)) / (big_phi(k) - big_phi(a)));
    }
    case Distribution::log_normal: {
      // value = nominal exp(s z), s = ln(1 + t_rel) / k
      const double s = std::log1p(t / std::fabs(nominal)) / k;
      const double e = std::exp(s * s);
      return std::fabs(nominal) * std::sqrt(e * (e - 1.0));
    }
    case Distribution::fixed: return 0.0;
  }
  return 0.0;
}

}  // namespace

std::vector<ParameterTolerance> parameter_tolerances(const Study& study) {
  const Design& design = study.design();
  const auto& params = design.circuit.parameters();
  std::vector<ParameterTolerance> out;
  std::vector<bool> seen(params.size(), false);
  std::vector<ParameterTolerance> by_index(params.size());
  for (const Variation& v : design.variations) {
    if (v.tolerance <= 0.0 && v.lot_tolerance <= 0.0) continue;
    for (const std::size_t i : detail::resolve_targets(design.circuit, v)) {
      const double nominal = params[i].nominal;
      const double unit = v.relative ? std::fabs(nominal) : 1.0;
      const double t = v.distribution == Distribution::fixed ? 0.0 : v.tolerance * unit;
      const double t_lot = v.lot_tolerance * unit;
      ParameterTolerance p;
      p.name = params[i].name;
      p.index = i;
      p.nominal = nominal;
      if (v.distribution == Distribution::log_normal && t > 0.0) {
        const double ratio = 1.0 + t / std::fabs(nominal);
        p.low = nominal / ratio - t_lot;
        p.high = nominal * ratio + t_lot;
      } else {
        p.low = nominal - t - t_lot;
        p.high = nominal + t + t_lot;
      }
      const double part = law_std_dev(v.distribution, t, v.sigmas, v.inner_tolerance * unit,
                                      nominal);
      const double lot = law_std_dev(v.lot_distribution, t_lot, v.sigmas, 0.0, nominal);
      p.std_dev = std::sqrt(part * part + lot * lot);
      if (p.high == p.low) continue;
      seen[i] = true;
      by_index[i] = p;
    }
  }
  for (std::size_t i = 0; i < params.size(); ++i) {
    if (seen[i]) out.push_back(by_index[i]);
  }
  return out;
}

namespace {

// Evaluates the study at `theta`; NaN values for an unevaluated draw.
void evaluate(const Study& study, const std::vector<double>& theta, std::vector<double>& values) {
  const SampleStatus status = study.evaluate(theta, values);
  if (status == SampleStatus::singular || status == SampleStatus::invalid_value) {
    std::fill(values.begin(), values.end(), nan);
  }
}

// Central differences of every measurement of `study` with respect to each tolerance's
// parameter: measurements x parameters, row-major.
std::vector<double> sensitivities(const Study& study, const std::vector<ParameterTolerance>& tol,
                                  double relative_step) {
  const std::size_t m_count = study.design().measurements.size();
  std::vector<double> out(m_count * tol.size(), nan);
  std::vector<double> theta = study.nominal_parameters();
  std::vector<double> up, down;
  for (std::size_t p = 0; p < tol.size(); ++p) {
    const double h = relative_step * 0.5 * (tol[p].high - tol[p].low);
    const double x0 = theta[tol[p].index];
    theta[tol[p].index] = x0 + h;
    evaluate(study, theta, up);
    theta[tol[p].index] = x0 - h;
    evaluate(study, theta, down);
    theta[tol[p].index] = x0;
    const double step = (x0 + h) - (x0 - h);  // the step actually taken, after rounding
    for (std::size_t m = 0; m < m_count; ++m) out[m * tol.size() + p] = (up[m] - down[m]) / step;
  }
  return out;
}

// The vertex where every parameter sits at the limit the sign of `s` points to
// (direction +1) or away from it (-1); zero sensitivity stays at nominal.
std::vector<double> vertex(const Study& study, const std::vector<ParameterTolerance>& tol,
                           const double* s, double direction) {
  std::vector<double> theta = study.nominal_parameters();
  for (std::size_t p = 0; p < tol.size(); ++p) {
    const double d = s[p] * direction;
    if (d > 0.0) theta[tol[p].index] = tol[p].high;
    if (d < 0.0) theta[tol[p].index] = tol[p].low;
  }
  return theta;
}

}  // namespace

WorstCaseResult worst_case(const Study& study, const WorstCaseOptions& options) {
  if (!(options.relative_step > 0.0 && options.relative_step < 1.0)) {
    throw RunError("the worst-case step must lie between 0 and 1 of a tolerance");
  }
  WorstCaseResult r;
  r.parameters = parameter_tolerances(study);
  const auto& tol = r.parameters;
  const std::size_t n = tol.size();
  const Design& design = study.design();
  const std::size_t m_count = design.measurements.size();
  const std::vector<double>& nominal = study.nominal_values();
  const std::vector<double> s = sensitivities(study, tol, options.relative_step);

  // cmrr is |A_d / A_cm|: not monotone, and infinite at a matched nominal. Its EVA
  // directions come from the signed common-mode gain of the same inputs and output,
  // measured by a companion study.
  std::vector<std::size_t> cmrr;
  Design companion = design;
  companion.specs.clear();
  companion.measurements.clear();
  for (std::size_t m = 0; m < m_count; ++m) {
    if (design.measurements[m].kind != MeasurementKind::cmrr) continue;
    Measurement cm = design.measurements[m];
    cm.kind = MeasurementKind::common_mode_gain;
    cm.name = "common-mode gain of " + cm.name;
    companion.measurements.push_back(cm);
    cmrr.push_back(m);
  }
  std::vector<double> s_cm;
  if (!cmrr.empty()) {
    const Study cm_study(companion);
    s_cm = sensitivities(cm_study, tol, options.relative_step);
  }

  std::vector<double> values;
  for (std::size_t m = 0; m < m_count; ++m) {
    MeasurementWorstCase w;
    w.name = design.measurements[m].name;
    w.kind = design.measurements[m].kind;
    w.nominal = nominal[m];
    w.sensitivities.assign(s.begin() + static_cast<std::ptrdiff_t>(m * n),
                           s.begin() + static_cast<std::ptrdiff_t>((m + 1) * n));
    const auto at_cmrr = std::find(cmrr.begin(), cmrr.end(), m);
    if (at_cmrr != cmrr.end()) {
      w.through_common_mode = true;
      const std::size_t c = static_cast<std::size_t>(at_cmrr - cmrr.begin());
      w.sensitivities.assign(s_cm.begin() + static_cast<std::ptrdiff_t>(c * n),
                             s_cm.begin() + static_cast<std::ptrdiff_t>((c + 1) * n));
      double worst = std::numeric_limits<double>::infinity();
      for (const double direction : {1.0, -1.0}) {
        evaluate(study, vertex(study, tol, w.sensitivities.data(), direction), values);
        if (!(values[m] >= worst)) worst = values[m];  // NaN propagates
      }
      w.low = worst;
      w.high = nominal[m];
    } else {
      double up = 0.0, down = 0.0, var = 0.0, band = 0.0;
      for (std::size_t p = 0; p < n; ++p) {
        const double a = w.sensitivities[p] * (tol[p].high - tol[p].nominal);
        const double b = w.sensitivities[p] * (tol[p].low - tol[p].nominal);
        up += std::max(a, b);
        down += std::min(a, b);
        const double sd = w.sensitivities[p] * tol[p].std_dev;
        var += sd * sd;
        const double half = w.sensitivities[p] * 0.5 * (tol[p].high - tol[p].low);
        band += half * half;
      }
      w.linear_low = w.nominal + down;
      w.linear_high = w.nominal + up;
      w.rss_std_dev = std::sqrt(var);
      w.rss_half_width = std::sqrt(band);
      for (std::size_t p = 0; p < n; ++p) {
        const double sd = w.sensitivities[p] * tol[p].std_dev;
        w.variance_shares.push_back(var > 0.0 ? sd * sd / var : nan);
      }
      evaluate(study, vertex(study, tol, w.sensitivities.data(), 1.0), values);
      w.high = values[m];
      evaluate(study, vertex(study, tol, w.sensitivities.data(), -1.0), values);
      w.low = values[m];
    }
    r.measurements.push_back(std::move(w));
  }

  if (n <= options.max_exhaustive && n < 63) {
    r.exhaustive = true;
    r.corners = std::uint64_t{1} << n;
    std::vector<double> theta = study.nominal_parameters();
    std::vector<double> low(m_count, std::numeric_limits<double>::infinity());
    std::vector<double> high(m_count, -std::numeric_limits<double>::infinity());
    for (std::uint64_t mask = 0; mask < r.corners; ++mask) {
      for (std::size_t p = 0; p < n; ++p) {
        theta[tol[p].index] = (mask >> p) & 1u ? tol[p].high : tol[p].low;
      }
      evaluate(study, theta, values);
      for (std::size_t m = 0; m < m_count; ++m) {
        if (std::isnan(values[m])) continue;
        low[m] = std::min(low[m], values[m]);
        high[m] = std::max(high[m], values[m]);
      }
    }
    for (std::size_t m = 0; m < m_count; ++m) {
      if (low[m] <= high[m]) {
        r.measurements[m].corner_low = low[m];
        r.measurements[m].corner_high = high[m];
      }
    }
  }
  return r;
}

}  // namespace lotwise

namespace lotwise {
namespace {

std::string cell(double v, int width = 12) {
  char buf[48];
  if (std::isnan(v)) {
    std::snprintf(buf, sizeof buf, "%-*s", width, "-");
  } else {
    std::snprintf(buf, sizeof buf, "%-*.6g ", width - 1, v);
  }
  return buf;
}

std::string text_cell(const std::string& s, std::size_t width) {
  return s.size() >= width ? s + " " : s + std::string(width - s.size(), ' ');
}

}  // namespace

std::string worst_case_table(const WorstCaseResult& w, const YieldResult* mc) {
  std::string out;
  out += "Worst case over " + std::to_string(w.parameters.size()) + " toleranced parameters";
  if (w.exhaustive) out += " (all " + std::to_string(w.corners) + " corners evaluated)";
  out += "\n\n";
  out += text_cell("Measurement", 16) + cell(nan).replace(0, 7, "Nominal") + "EVA low     EVA high    " +
         "RSS -3 sd   RSS +3 sd   Corner low  Corner high";
  if (mc) out += " MC 0.135 %  MC 99.865 % MC min      MC max";
  out += "\n";
  for (std::size_t m = 0; m < w.measurements.size(); ++m) {
    const MeasurementWorstCase& c = w.measurements[m];
    out += text_cell(c.name, 16) + cell(c.nominal) + cell(c.low) + cell(c.high) +
           cell(c.nominal - 3.0 * c.rss_std_dev) + cell(c.nominal + 3.0 * c.rss_std_dev) +
           cell(c.corner_low) + cell(c.corner_high);
    if (mc && m < mc->measurements.size()) {
      const MeasurementSummary& s = mc->measurements[m];
      out += cell(s.histogram.quantile(0.00135)) + cell(s.histogram.quantile(0.99865)) +
             cell(s.stats.min()) + cell(s.stats.max());
    }
    out += "\n";
  }
  bool any_through = false;
  for (const auto& c : w.measurements) any_through = any_through || c.through_common_mode;
  if (any_through) {
    out += "(cmrr: EVA evaluates both vertices of the signed common-mode gain and keeps the "
           "lower CMRR; its best case is the nominal)\n";
  }
  out += "\nSensitivities at nominal (d measurement / d parameter) and share of the RSS variance\n";
  out += text_cell("Parameter", 16) + cell(nan).replace(0, 7, "Nominal") + "Low         High        Std dev     ";
  for (const auto& c : w.measurements) out += text_cell(c.name, 12) + text_cell("share", 8);
  out += "\n";
  for (std::size_t p = 0; p < w.parameters.size(); ++p) {
    const ParameterTolerance& t = w.parameters[p];
    out += text_cell(t.name, 16) + cell(t.nominal) + cell(t.low) + cell(t.high) + cell(t.std_dev);
    for (const auto& c : w.measurements) {
      out += cell(c.sensitivities[p]);
      char share[16];
      if (p < c.variance_shares.size() && !std::isnan(c.variance_shares[p])) {
        std::snprintf(share, sizeof share, "%5.1f %% ", 100.0 * c.variance_shares[p]);
      } else {
        std::snprintf(share, sizeof share, "-       ");
      }
      out += share;
    }
    out += "\n";
  }
  return out;
}

}  // namespace lotwise
