// lotwise's JSON report (schema "lotwise.report", version 1; docs/report-format.md).
#include <cmath>
#include <cstdio>
#include <fstream>
#include <string>

#include <nlohmann/json.hpp>

#include "lotwise/error.hpp"
#include "lotwise/parameter_sweep.hpp"
#include "lotwise/report.hpp"
#include "lotwise/worst_case.hpp"
#include "lotwise/version.hpp"

namespace lotwise {

const char* const result_caution =
    "Results are model-based estimates: they hold only as far as the circuit model and the "
    "stated part spreads describe the real parts. Safety-relevant designs (medical, "
    "automotive, mains-powered) still need qualification testing, the applicable standards "
    "and licensed review.";

namespace {

using nlohmann::json;

// JSON has no infinities: non-finite numbers are written as the strings "inf", "-inf", "nan".
json number(double v) {
  if (std::isnan(v)) return "nan";
  if (std::isinf(v)) return v > 0 ? "inf" : "-inf";
  return v;
}

json limit(double v) { return std::isinf(v) ? json(nullptr) : json(v); }

json interval(const Interval& i) {
  return json{{"method", "clopper_pearson"}, {"low", number(i.low)}, {"high", number(i.high)}};
}

json bounds(const Interval& i) { return json{{"low", number(i.low)}, {"high", number(i.high)}}; }

// The three binomial intervals of a fraction.
json interval_set(const Interval& cp, const Interval& wilson, const Interval& jeffreys) {
  return json{{"clopper_pearson", bounds(cp)}, {"wilson", bounds(wilson)}, {"jeffreys", bounds(jeffreys)}};
}

json capability_json(const Capability& c) {
  return json{{"cp", number(c.cp)},        {"cpk", number(c.cpk)},
              {"cpu", number(c.cpu)},      {"cpl", number(c.cpl)},
              {"cp_interval", bounds(c.cp_interval)},
              {"cpk_interval", bounds(c.cpk_interval)}};
}

// Quantiles, coverage interval and a coarse histogram of a measurement.
json distribution_json(const MeasurementSummary& m, double confidence) {
  const Histogram& h = m.histogram;
  if (!h.has_range()) return nullptr;
  json quantiles = json::object();
  for (const double p : {0.00135, 0.025, 0.5, 0.975, 0.99865}) {
    char key[16];
    std::snprintf(key, sizeof key, "%g", p);
    quantiles[key] = number(h.quantile(p));
  }
  json out{{"coverage", json{{"level", confidence},
                             {"low", number(m.coverage.low)},
                             {"high", number(m.coverage.high)}}},
           {"quantiles", quantiles}};
  const Histogram coarse = h.coarsened(64);
  json hist{{"bins", h.bins()}, {"below", h.below()}, {"above", h.above()}};
  if (coarse.has_range()) {
    hist["low"] = coarse.low();
    hist["high"] = coarse.high();
    hist["counts"] = coarse.counts();
  }
  out["histogram"] = hist;
  return out;
}

json worst_case_json(const WorstCaseResult& w) {
  json parameters = json::array();
  for (const auto& p : w.parameters) {
    parameters.push_back(json{{"name", p.name},
                              {"nominal", number(p.nominal)},
                              {"low", number(p.low)},
                              {"high", number(p.high)},
                              {"std_dev", number(p.std_dev)}});
  }
  json measurements = json::array();
  for (const auto& m : w.measurements) {
    json s = json::array();
    for (const double v : m.sensitivities) s.push_back(number(v));
    json shares = json::array();
    for (const double v : m.variance_shares) shares.push_back(number(v));
    measurements.push_back(json{{"name", m.name},
                                {"kind", to_string(m.kind)},
                                {"nominal", number(m.nominal)},
                                {"sensitivities", s},
                                {"through_common_mode", m.through_common_mode},
                                {"eva", json{{"low", number(m.low)}, {"high", number(m.high)}}},
                                {"linear", json{{"low", number(m.linear_low)},
                                                {"high", number(m.linear_high)}}},
                                {"rss", json{{"std_dev", number(m.rss_std_dev)},
                                             {"half_width", number(m.rss_half_width)}}},
                                {"variance_shares", shares},
                                {"corners", json{{"low", number(m.corner_low)},
                                                 {"high", number(m.corner_high)}}}});
  }
  return json{{"parameters", parameters},
              {"exhaustive", w.exhaustive},
              {"corners", w.corners},
              {"measurements", measurements}};
}

json sweep_json(const ParameterSweepResult& sweep) {
  json axes = json::array();
  for (const auto& a : sweep.axes) {
    axes.push_back(json{{"setting", to_string(a.setting)}, {"parameter", a.parameter}, {"values", a.values}});
  }
  json points = json::array();
  for (const auto& p : sweep.points) {
    const YieldResult& r = p.result;
    json specs = json::array();
    for (const auto& s : r.specs) {
      specs.push_back(json{{"measurement", s.spec.measurement},
                           {"fraction", number(s.fraction)},
                           {"cpk", number(s.capability.cpk)}});
    }
    json measurements = json::array();
    for (const auto& m : r.measurements) {
      measurements.push_back(json{{"name", m.name},
                                  {"mean", number(m.stats.mean())},
                                  {"std_dev", number(m.stats.std_dev())},
                                  {"coverage", bounds(m.coverage)}});
    }
    points.push_back(json{{"settings", p.settings},
                          {"samples", r.samples},
                          {"passed", r.passed},
                          {"yield", number(r.yield)},
                          {"intervals", interval_set(r.interval, r.wilson_interval, r.jeffreys_interval)},
                          {"specs", specs},
                          {"measurements", measurements}});
  }
  return json{{"axes", axes}, {"points", points}};
}

// The results at each operating temperature of a sweep.
json temperatures_json(const YieldResult& r) {
  json out = json::array();
  for (const TemperatureResult& t : r.temperatures) {
    json specs = json::array();
    for (const auto& s : t.specs) {
      json spec{{"measurement", s.spec.measurement}, {"passed", s.passed},
                {"fraction", number(s.fraction)}};
      if (r.samples > 0) spec["interval"] = interval(s.interval);
      specs.push_back(spec);
    }
    json measurements = json::array();
    for (const auto& m : t.measurements) {
      measurements.push_back(json{{"name", m.name},
                                  {"count", m.stats.count()},
                                  {"non_finite", m.stats.non_finite()},
                                  {"mean", number(m.stats.mean())},
                                  {"std_dev", number(m.stats.std_dev())},
                                  {"min", number(m.stats.min())},
                                  {"max", number(m.stats.max())}});
    }
    json at{{"temperature", t.temperature},
            {"passed", t.passed},
            {"fraction", number(t.yield)},
            {"unevaluated", json{{"singular", t.singular},
                                 {"invalid_values", t.invalid_values},
                                 {"saturated", t.saturated}}},
            {"specs", specs},
            {"measurements", measurements}};
    if (r.samples > 0) at["interval"] = interval(t.interval);
    out.push_back(at);
  }
  return out;
}

}  // namespace

std::string report_json(const Study& study, const YieldResult& r) {
  return report_json(study, r, ReportSections{});
}

std::string report_json(const Study& study, const YieldResult& r, const ReportSections& sections) {
  json j;
  j["schema"] = "lotwise.report";
  j["schema_version"] = 1;
  j["lotwise_version"] = version();
  j["caution"] = result_caution;
  json design;
  design["title"] = study.design().title;
  design["parts"] = study.design().circuit.elements().size();
  design["varied_parameters"] = study.varied_parameters();
  design["random_coordinates"] = study.coordinate_names();
  const Temperature& temperature = study.design().temperature;
  json temp{{"reference", temperature.reference}};
  if (!temperature.operating.empty()) temp["operating"] = temperature.operating;
  if (temperature.drawn) temp["range"] = json::array({temperature.low, temperature.high});
  design["temperature"] = temp;
  j["design"] = design;
  j["run"] = json{{"samples_requested", r.requested},
                  {"samples_evaluated", r.samples},
                  {"seed", r.seed},
                  {"chunk_size", r.chunk_size},
                  {"complete", r.complete},
                  {"confidence", r.confidence},
                  {"sampler", to_string(r.sampler)},
                  {"replicates", r.replicates}};
  json yield{{"passed", r.passed}, {"fraction", number(r.yield)}};
  // Replicate standard errors exist only with two or more replicates.
  if (std::isfinite(r.yield_standard_error)) {
    yield["standard_error"] = r.yield_standard_error;
    yield["replicate_interval"] = json{{"method", "student_t_replicates"},
                                       {"low", number(r.replicate_interval.low)},
                                       {"high", number(r.replicate_interval.high)}};
  }
  if (r.samples > 0) {
    yield["interval"] = interval(r.interval);
    yield["intervals"] = interval_set(r.interval, r.wilson_interval, r.jeffreys_interval);
    yield["failure_upper_bound"] = number(r.failure_upper_bound);
  }
  j["yield"] = yield;
  j["run"]["target_met"] = r.target_met;
  if (r.tolerance_batches > 0) j["run"]["tolerance_batches"] = r.tolerance_batches;
  if (r.builds_per_lot > 0) j["run"]["builds_per_lot"] = r.builds_per_lot;
  j["unevaluated"] = json{{"singular", r.singular},
                          {"invalid_values", r.invalid_values},
                          {"saturated", r.saturated}};
  json specs = json::array();
  for (const auto& s : r.specs) {
    json spec{{"measurement", s.spec.measurement},
              {"min", limit(s.spec.min)},
              {"max", limit(s.spec.max)},
              {"passed", s.passed},
              {"fraction", number(s.fraction)},
              {"saturated", s.saturated}};
    if (r.samples > 0) {
      spec["interval"] = interval(s.interval);
      spec["intervals"] = interval_set(s.interval, s.wilson_interval, s.jeffreys_interval);
    }
    spec["capability"] = capability_json(s.capability);
    if (r.builds_per_lot > 0) spec["capability_within_lots"] = capability_json(s.within_lot_capability);
    spec["normal_fit"] = number(s.normal_fit);
    if (std::isfinite(s.standard_error)) spec["standard_error"] = s.standard_error;
    specs.push_back(spec);
  }
  j["specs"] = specs;
  json measurements = json::array();
  for (const auto& m : r.measurements) {
    measurements.push_back(json{{"name", m.name},
                                {"kind", to_string(m.kind)},
                                {"unit", unit_of(m.kind)},
                                {"nominal", number(m.nominal)},
                                {"count", m.stats.count()},
                                {"non_finite", m.stats.non_finite()},
                                {"saturated", m.saturated},
                                {"mean", number(m.stats.mean())},
                                {"std_dev", number(m.stats.std_dev())},
                                {"min", number(m.stats.min())},
                                {"max", number(m.stats.max())}});
  }
  for (std::size_t i = 0; i < r.measurements.size() && i < measurements.size(); ++i) {
    if (std::isfinite(r.measurements[i].mean_standard_error)) {
      measurements[i]["mean_standard_error"] = r.measurements[i].mean_standard_error;
    }
    if (r.builds_per_lot > 0) {
      measurements[i]["within_lot_std_dev"] = number(r.measurements[i].within_lot_std_dev);
    }
    if (std::isfinite(r.measurements[i].numerical_tolerance)) {
      measurements[i]["numerical_tolerance"] = r.measurements[i].numerical_tolerance;
    }
    const json d = distribution_json(r.measurements[i], r.confidence);
    if (!d.is_null()) measurements[i]["distribution"] = d;
  }
  j["measurements"] = measurements;
  if (!r.temperatures.empty()) j["temperatures"] = temperatures_json(r);
  if (!r.attribution_parameters.empty()) {
    const std::size_t n = r.attribution_parameters.size();
    json correlations = json::object();
    for (std::size_t m = 0; m < r.measurements.size() && (m + 1) * n <= r.correlations.size(); ++m) {
      json row = json::array();
      for (std::size_t a = 0; a < n; ++a) row.push_back(number(r.correlations[m * n + a]));
      correlations[r.measurements[m].name] = row;
    }
    json shift = json::array();
    for (const double v : r.failure_shift) shift.push_back(number(v));
    json spread = json::array();
    for (const double v : r.failure_spread) spread.push_back(number(v));
    j["attribution"] = json{{"parameters", r.attribution_parameters},
                            {"correlations", correlations},
                            {"failure_shift", shift},
                            {"failure_spread", spread}};
    if (r.regression_rows > 0) {
      // Per measurement rows, like the correlations.
      auto table = [&](const std::vector<double>& values) {
        json t = json::object();
        for (std::size_t m = 0; m < r.measurements.size() && (m + 1) * n <= values.size(); ++m) {
          json row = json::array();
          for (std::size_t a = 0; a < n; ++a) row.push_back(number(values[m * n + a]));
          t[r.measurements[m].name] = row;
        }
        return t;
      };
      json r_squared = json::object();
      for (std::size_t m = 0; m < r.measurements.size() && m < r.regression_r_squared.size(); ++m) {
        r_squared[r.measurements[m].name] = number(r.regression_r_squared[m]);
      }
      j["attribution"]["regression_rows"] = r.regression_rows;
      j["attribution"]["standardized_regression"] = table(r.standardized_regression);
      j["attribution"]["regression_r_squared"] = r_squared;
      j["attribution"]["rank_correlations"] = table(r.rank_correlations);
    }
  }
  if (sections.worst_case) j["worst_case"] = worst_case_json(*sections.worst_case);
  if (sections.sweep) j["sweep"] = sweep_json(*sections.sweep);
  return j.dump(2) + "\n";
}

void write_report(const std::string& path, const Study& study, const YieldResult& result) {
  write_report(path, study, result, ReportSections{});
}

void write_report(const std::string& path, const Study& study, const YieldResult& result,
                  const ReportSections& sections) {
  const std::string text = report_json(study, result, sections);
  const std::string temporary = path + ".partial";
  {
    std::ofstream out(temporary, std::ios::binary | std::ios::trunc);
    if (!out) throw Error(path + ": cannot write the report (cannot create " + temporary + ")");
    out << text;
    out.flush();
    if (!out) {
      out.close();
      std::remove(temporary.c_str());
      throw Error(path + ": writing the report failed");
    }
  }
  if (std::rename(temporary.c_str(), path.c_str()) != 0) {
    std::remove(temporary.c_str());
    throw Error(path + ": cannot move the finished report into place");
  }
}

}  // namespace lotwise
