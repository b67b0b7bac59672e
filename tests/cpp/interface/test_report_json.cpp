// The JSON report (schema "lotwise.report", version 1), read back with an independent
// JSON parser: names, counts, intervals, and how non-finite numbers and missing limits
// are written.
#include <catch2/catch.hpp>

#include <cmath>
#include <string>

#include <nlohmann/json.hpp>

#include "interface_support.hpp"
#include "lotwise/lotwise.hpp"
#include "test_support.hpp"

using nlohmann::json;

namespace {

// A perfectly matched difference amplifier of gain 10 in which only the op-amp's offset
// varies (3 mV at 3 sigma): its common-mode gain is exactly zero, so its CMRR is
// +infinity in every build, while the output offset (11 x the input offset) spreads.
lotwise::Design offset_only_design() {
  lotwise::Design d{"Matched difference amplifier, offset only",
                    lotwise::testing::difference_amplifier(10e3, 100e3, 10e3, 100e3),
                    {},
                    {},
                    {},
                    {}};
  lotwise::Variation offset;
  offset.targets = {"U1.offset"};
  offset.tolerance = 3e-3;
  offset.relative = false;
  offset.sigmas = 3.0;
  d.variations.push_back(offset);
  d.measurements.push_back({"gain", lotwise::MeasurementKind::differential_gain, {"VP", "VN"},
                            {"out"}, 0.0});
  d.measurements.push_back({"cmrr", lotwise::MeasurementKind::cmrr, {"VP", "VN"}, {"out"}, 0.0});
  d.measurements.push_back({"offset", lotwise::MeasurementKind::output_offset, {"VP", "VN"},
                            {"out"}, 0.0});
  lotwise::Spec offset_spec;
  offset_spec.measurement = "offset";
  offset_spec.min = -15e-3;
  offset_spec.max = 15e-3;
  lotwise::Spec cmrr_spec;
  cmrr_spec.measurement = "cmrr";
  cmrr_spec.min = 80.0;  // no max: written as null
  d.specs = {offset_spec, cmrr_spec};
  return d;
}

const json& measurement(const json& report, const std::string& name) {
  for (const auto& m : report.at("measurements")) {
    if (m.at("name") == name) return m;
  }
  FAIL("no measurement called " << name << " in the report");
  return report;
}

}  // namespace

TEST_CASE("report: schema and counts and intervals agree", "[report]") {
  const lotwise::Study study(offset_only_design());
  lotwise::RunOptions options;
  options.samples = 3000;
  options.seed = 42;
  options.threads = 1;
  const auto result = study.run(options);
  const json j = json::parse(lotwise::report_json(study, result));

  CHECK(j.at("schema") == "lotwise.report");
  CHECK(j.at("schema_version") == 1);
  CHECK(j.at("lotwise_version") == lotwise::version());
  CHECK(j.at("caution") == lotwise::result_caution);
  CHECK_THAT(j.at("caution").get<std::string>(), Catch::Contains("model-based estimates"));

  CHECK(j.at("design").at("title") == "Matched difference amplifier, offset only");
  CHECK(j.at("design").at("parts") == 7);
  CHECK(j.at("design").at("varied_parameters") == json::array({"U1.offset"}));

  const json& run = j.at("run");
  CHECK(run.at("samples_requested") == 3000);
  CHECK(run.at("samples_evaluated") == 3000);
  CHECK(run.at("seed") == 42);
  CHECK(run.at("complete") == true);
  CHECK(run.at("confidence") == 0.95);
  // The answer does not depend on the thread count, so the report does not carry it.
  CHECK_FALSE(run.contains("threads"));

  const auto samples = run.at("samples_evaluated").get<std::uint64_t>();
  const json& yield = j.at("yield");
  const auto passed = yield.at("passed").get<std::uint64_t>();
  CHECK(passed == result.passed);
  CHECK(passed <= samples);
  // Offset sigma 1 mV x noise gain 11 = 11 mV against +-15 mV: neither all nor none pass.
  CHECK(passed > 0);
  CHECK(passed < samples);
  const double fraction = yield.at("fraction").get<double>();
  CHECK(fraction == static_cast<double>(passed) / static_cast<double>(samples));
  const json& interval = yield.at("interval");
  CHECK(interval.at("method") == "clopper_pearson");
  CHECK(interval.at("low").get<double>() <= fraction);
  CHECK(fraction <= interval.at("high").get<double>());
  const auto expected = lotwise::clopper_pearson(passed, samples, 0.95);
  CHECK(interval.at("low").get<double>() == expected.low);
  CHECK(interval.at("high").get<double>() == expected.high);
  CHECK(j.at("unevaluated").at("singular") == 0);
  CHECK(j.at("unevaluated").at("invalid_values") == 0);

  // Specs in the order given; a build passes all only if it passes each.
  const json& specs = j.at("specs");
  REQUIRE(specs.size() == 2);
  CHECK(specs[0].at("measurement") == "offset");
  CHECK(specs[0].at("min") == -15e-3);
  CHECK(specs[0].at("max") == 15e-3);
  CHECK(specs[1].at("measurement") == "cmrr");
  CHECK(specs[1].at("min") == 80.0);
  CHECK(specs[1].at("max").is_null());
  for (const auto& s : specs) {
    const auto spec_passed = s.at("passed").get<std::uint64_t>();
    CHECK(spec_passed <= samples);
    CHECK(spec_passed >= passed);
    const double f = s.at("fraction").get<double>();
    CHECK(f == static_cast<double>(spec_passed) / static_cast<double>(samples));
    CHECK(s.at("interval").at("low").get<double>() <= f);
    CHECK(f <= s.at("interval").at("high").get<double>());
  }
  // Infinite rejection meets "min 80 dB" in every build, so the yield is the offset's.
  CHECK(specs[1].at("passed") == samples);
  CHECK(specs[0].at("passed") == passed);

  // Measurements in the order given, with kind and unit.
  const json& ms = j.at("measurements");
  REQUIRE(ms.size() == 3);
  CHECK(ms[0].at("name") == "gain");
  CHECK(ms[0].at("kind") == "differential_gain");
  CHECK(ms[0].at("unit") == "V/V");
  CHECK(ms[1].at("kind") == "cmrr");
  CHECK(ms[1].at("unit") == "dB");
  CHECK(ms[2].at("kind") == "output_offset");
  CHECK(ms[2].at("unit") == "V");
  for (const auto& m : ms) {
    CHECK(m.at("count").get<std::uint64_t>() + m.at("non_finite").get<std::uint64_t>() ==
          samples);
  }
  // Resistors fixed: the gain is R2/R1 = 10 in every build.
  // source: Sedra & Smith, Microelectronic Circuits, ch. 2 (difference amplifier)
  CHECK_THAT(ms[0].at("nominal").get<double>(), lotwise::testing::close_rel(10.0, 1e-12));
  CHECK_THAT(ms[0].at("min").get<double>(), lotwise::testing::close_rel(10.0, 1e-12));
  CHECK_THAT(ms[0].at("max").get<double>(), lotwise::testing::close_rel(10.0, 1e-12));
}

TEST_CASE("report: non-finite numbers are written as strings", "[report]") {
  const lotwise::Study study(offset_only_design());
  lotwise::RunOptions options;
  options.samples = 200;
  options.seed = 3;
  options.threads = 1;
  const auto result = study.run(options);
  REQUIRE(std::isinf(study.nominal_values()[1]));
  const std::string text = lotwise::report_json(study, result);
  // Plain JSON has no infinities; a strict parser must accept the whole report.
  const json j = json::parse(text);

  const json& cmrr = measurement(j, "cmrr");
  CHECK(cmrr.at("nominal") == "inf");
  CHECK(cmrr.at("count") == 0);
  CHECK(cmrr.at("non_finite") == 200);
  CHECK(cmrr.at("mean") == "nan");     // no finite value to average
  CHECK(cmrr.at("std_dev") == "nan");
  CHECK(cmrr.at("min") == "inf");      // every value was +inf
  CHECK(cmrr.at("max") == "inf");

  // A finite measurement stays a number.
  const json& offset = measurement(j, "offset");
  CHECK(offset.at("count") == 200);
  CHECK(offset.at("mean").is_number());
  CHECK(offset.at("std_dev").get<double>() > 0.0);
}

TEST_CASE("report: write_report leaves exactly the report file", "[report]") {
  const lotwise::Study study(offset_only_design());
  lotwise::RunOptions options;
  options.samples = 100;
  options.threads = 1;
  const auto result = study.run(options);
  lotwise::testing::ScratchDir dir;
  const std::string path = dir.file("report.json");
  lotwise::write_report(path, study, result);
  CHECK(dir.entries() == std::vector<std::string>{"report.json"});
  CHECK(lotwise::testing::read_text(path) == lotwise::report_json(study, result));

  // A folder that does not exist: an Error naming the path, and nothing left behind.
  const std::string nowhere = dir.file("missing/report.json");
  CHECK_THROWS_AS(lotwise::write_report(nowhere, study, result), lotwise::Error);
  CHECK_THROWS_WITH(lotwise::write_report(nowhere, study, result), Catch::Contains(nowhere));
  CHECK(dir.entries() == std::vector<std::string>{"report.json"});
}

TEST_CASE("report: the summary table shows the yield and the caution", "[report]") {
  const lotwise::Study study(offset_only_design());
  lotwise::RunOptions options;
  options.samples = 500;
  options.threads = 1;
  const auto result = study.run(options);
  const std::string table = lotwise::summary_table(study, result);
  CHECK_THAT(table, Catch::Contains("Matched difference amplifier, offset only"));
  CHECK_THAT(table, Catch::Contains("Yield ") && Catch::Contains("95 % interval"));
  CHECK_THAT(table, Catch::Contains(std::to_string(result.passed) + " of 500 builds"));
  CHECK_THAT(table, Catch::Contains(lotwise::result_caution));
  CHECK_THAT(table, Catch::Contains(">= 80 dB"));  // a one-sided limit
}
