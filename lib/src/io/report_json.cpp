// lotwise's JSON report (schema "lotwise.report", version 1; docs/report-format.md).
#include <cmath>
#include <cstdio>
#include <fstream>
#include <string>

#include <nlohmann/json.hpp>

#include "lotwise/error.hpp"
#include "lotwise/report.hpp"
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

}  // namespace

std::string report_json(const Study& study, const YieldResult& r) {
  json j;
  j["schema"] = "lotwise.report";
  j["schema_version"] = 1;
  j["lotwise_version"] = version();
  j["caution"] = result_caution;
  json design;
  design["title"] = study.design().title;
  design["parts"] = study.design().circuit.elements().size();
  design["varied_parameters"] = study.varied_parameters();
  j["design"] = design;
  j["run"] = json{{"samples_requested", r.requested},
                  {"samples_evaluated", r.samples},
                  {"seed", r.seed},
                  {"chunk_size", r.chunk_size},
                  {"complete", r.complete},
                  {"confidence", r.confidence}};
  json yield{{"passed", r.passed}, {"fraction", number(r.yield)}};
  if (r.samples > 0) yield["interval"] = interval(r.interval);
  j["yield"] = yield;
  j["unevaluated"] = json{{"singular", r.singular}, {"invalid_values", r.invalid_values}};
  json specs = json::array();
  for (const auto& s : r.specs) {
    json spec{{"measurement", s.spec.measurement},
              {"min", limit(s.spec.min)},
              {"max", limit(s.spec.max)},
              {"passed", s.passed},
              {"fraction", number(s.fraction)}};
    if (r.samples > 0) spec["interval"] = interval(s.interval);
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
                                {"mean", number(m.stats.mean())},
                                {"std_dev", number(m.stats.std_dev())},
                                {"min", number(m.stats.min())},
                                {"max", number(m.stats.max())}});
  }
  j["measurements"] = measurements;
  return j.dump(2) + "\n";
}

void write_report(const std::string& path, const Study& study, const YieldResult& result) {
  const std::string text = report_json(study, result);
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
