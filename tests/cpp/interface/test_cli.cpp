// The command-line program, run as a user runs it: exit statuses, the printed table,
// one clear error line per fault, and the report file it leaves (or does not leave).
#include <catch2/catch.hpp>

#include <filesystem>
#include <string>
#include <vector>

#include <nlohmann/json.hpp>

#include "interface_support.hpp"
#include "test_support.hpp"

#if defined(LOTWISE_CLI)

using Catch::Contains;
using Catch::StartsWith;
using lotwise::testing::CommandResult;
using lotwise::testing::ScratchDir;
using lotwise::testing::bad_design_path;
using lotwise::testing::example_path;
using lotwise::testing::lines_of;

namespace {

CommandResult lotwise_cli(const std::vector<std::string>& args, const ScratchDir& dir) {
  return lotwise::testing::run_program(LOTWISE_CLI, args, dir);
}

// One bad design file and a fragment its error line must contain.
struct BadInput {
  const char* file;
  const char* names;
};

// Each design-file fault of test_design_errors.cpp, as the program reports it.
const std::vector<BadInput> bad_inputs = {
    {"unknown_key.toml", "unknown_key.toml:12:9: unknown key 'vaule' in part 'R2'"},
    {"unknown_part_type.toml", "unknown part type 'resistr'"},
    {"unknown_output_node.toml", "output node 'outt' is not in the circuit"},
    {"floating_node.toml", "node 'shield' has no DC path to ground"},
    {"voltage_loop.toml", "loop of voltage sources"},
    {"negative_resistance.toml", "negative_resistance.toml:9:"},
    {"malformed_number.toml", "malformed number '4.9.9k'"},
    {"spec_without_measurement.toml", "spec on 'gian': no measurement has that name"},
    {"open_loop_opamp.toml", "singular"},
    {"invalid_toml.toml", "invalid_toml.toml:4:41: not valid TOML"},
    {"missing_parts.toml", "no [parts] section"},
    {"vary_matches_nothing.toml", "target 'Q*' matches no parameter"},
    {"relative_offset.toml", "'U1.offset' has a nominal value of 0"},
    {"unknown_grade.toml", "no op-amp grade called 'precison'"},
    {"wrong_input_count.toml", "needs 2 input source(s), got 1"},
    {"overlapping_vary.toml", "'R2' is spread by both [[vary]] number 1 and [[vary]] number 2"},
};

void check_one_error_line(const CommandResult& r, const std::string& fragment) {
  INFO("stderr: " << r.err);
  CHECK(r.status == 1);
  const auto lines = lines_of(r.err);
  REQUIRE(lines.size() == 1);
  CHECK_THAT(lines[0], StartsWith("lotwise: error: ") && Contains(fragment));
}

// A design's error line also says which file it is about, even when the fault is
// found after reading (topology, singular network).
void check_design_error_line(const CommandResult& r, const std::string& file,
                             const std::string& fragment) {
  check_one_error_line(r, fragment);
  CHECK_THAT(r.err, StartsWith("lotwise: error: " + bad_design_path(file) + ":"));
}

}  // namespace

TEST_CASE("cli: check prints the nominal values of an example", "[cli]") {
  ScratchDir dir;
  const auto r = lotwise_cli({"check", example_path("load_cell_amp_1pct.toml")}, dir);
  INFO("stderr: " << r.err);
  CHECK(r.status == 0);
  CHECK(r.err.empty());
  CHECK_THAT(r.out, Contains("Load-cell bridge amplifier, 1 % resistors"));
  CHECK_THAT(r.out, Contains("13 parts") && Contains("3 measurements") && Contains("3 specs"));
  // (1 + 2 x 49.9k / 1k) x 20k / 10k = 201.6 with ideal op-amps; an open-loop gain of 1e6
  // takes off about noise gain / A0 = 100.8e-6 of it, giving 201.58.
  // source: Sedra & Smith, Microelectronic Circuits, ch. 2 (finite open-loop gain)
  CHECK_THAT(r.out, Contains("gain = 201.579 V/V"));
}

TEST_CASE("cli: run prints the yield table with the caution", "[cli]") {
  ScratchDir dir;
  for (const char* name : {"load_cell_amp_1pct.toml", "load_cell_amp_01pct.toml",
                           "over_temperature_trip.toml", "sump_pump_level_switch.toml",
                           "antialias_lowpass.toml"}) {
    INFO(name);
    const auto r = lotwise_cli({"run", example_path(name), "-n", "2000"}, dir);
    INFO("stderr: " << r.err);
    CHECK(r.status == 0);
    CHECK(r.err.empty());  // no progress line when stderr is not a terminal
    CHECK_THAT(r.out, Contains("Yield ") && Contains("95 % interval"));
    CHECK_THAT(r.out, Contains("2000 samples, seed 2026"));
    CHECK_THAT(r.out, Contains("model-based estimates"));
  }
}

TEST_CASE("cli: quiet prints nothing and the report holds the result", "[cli]") {
  ScratchDir dir;
  const std::string report = dir.file("out.json");
  const auto r = lotwise_cli(
      {"run", lotwise::testing::data_path("diff_amp.toml"), "-q", "-r", report}, dir);
  INFO("stderr: " << r.err);
  CHECK(r.status == 0);
  CHECK(r.out.empty());
  CHECK(r.err.empty());
  CHECK(dir.entries() == std::vector<std::string>{"out.json"});
  const auto j = nlohmann::json::parse(lotwise::testing::read_text(report));
  CHECK(j.at("schema") == "lotwise.report");
  // The file's [run] settings apply when the options do not override them.
  CHECK(j.at("run").at("samples_evaluated") == 2000);
  CHECK(j.at("run").at("seed") == 11);
}

TEST_CASE("cli: every bad design exits 1 with one error line and no report", "[cli]") {
  ScratchDir dir;
  const std::string report = dir.file("out.json");
  for (const auto& bad : bad_inputs) {
    SECTION(bad.file) {
      const auto run = lotwise_cli({"run", bad_design_path(bad.file), "-q", "-r", report}, dir);
      check_design_error_line(run, bad.file, bad.names);
      CHECK(run.out.empty());
      CHECK_FALSE(std::filesystem::exists(report));
      CHECK_FALSE(std::filesystem::exists(report + ".partial"));
      CHECK(dir.entries().empty());

      const auto check = lotwise_cli({"check", bad_design_path(bad.file)}, dir);
      check_design_error_line(check, bad.file, bad.names);
      CHECK(check.out.empty());
    }
  }
}

TEST_CASE("cli: an unwritable report path is an error after the run", "[cli]") {
  ScratchDir dir;
  const std::string report = dir.file("no_such_folder/out.json");
  const auto r =
      lotwise_cli({"run", lotwise::testing::data_path("diff_amp.toml"), "-q", "-r", report}, dir);
  check_one_error_line(r, report + ": cannot write the report");
  CHECK(dir.entries().empty());
}

TEST_CASE("cli: usage errors exit non-zero and say what is wrong", "[cli]") {
  ScratchDir dir;
  SECTION("zero samples") {
    const auto r = lotwise_cli({"run", lotwise::testing::data_path("diff_amp.toml"), "-n", "0"}, dir);
    CHECK(r.status != 0);
    CHECK(r.out.empty());
    CHECK_THAT(r.err, Contains("--samples"));
  }
  SECTION("a design file that does not exist") {
    const std::string missing = dir.file("absent.toml");
    const auto r = lotwise_cli({"run", missing}, dir);
    CHECK(r.status != 0);
    CHECK(r.out.empty());
    CHECK_THAT(r.err, Contains(missing));
    const auto c = lotwise_cli({"check", missing}, dir);
    CHECK(c.status != 0);
    CHECK_THAT(c.err, Contains(missing));
  }
  SECTION("no command") {
    const auto r = lotwise_cli({}, dir);
    CHECK(r.status != 0);
  }
  SECTION("a required yield outside 0..1") {
    const auto r = lotwise_cli(
        {"run", lotwise::testing::data_path("diff_amp.toml"), "--require-yield", "1.5"}, dir);
    CHECK(r.status != 0);
    CHECK_THAT(r.err, Contains("--require-yield"));
  }
}

TEST_CASE("cli: the report is byte-identical on one and two threads", "[cli]") {
  ScratchDir dir;
  const std::string one = dir.file("one.json");
  const std::string two = dir.file("two.json");
  // 5000 samples make five chunks of 1024, so two threads really share the work.
  const std::string design = example_path("load_cell_amp_1pct.toml");
  const auto a = lotwise_cli({"run", design, "-n", "5000", "-s", "99", "-t", "1", "-q", "-r", one}, dir);
  const auto b = lotwise_cli({"run", design, "-n", "5000", "-s", "99", "-t", "2", "-q", "-r", two}, dir);
  REQUIRE(a.status == 0);
  REQUIRE(b.status == 0);
  const std::string text = lotwise::testing::read_text(one);
  CHECK(text == lotwise::testing::read_text(two));
  const auto j = nlohmann::json::parse(text);
  CHECK(j.at("run").at("seed") == 99);
  CHECK(j.at("run").at("samples_evaluated") == 5000);
  // Nothing in it depends on the machine or the moment.
  CHECK_THAT(text, !Contains("thread") && !Contains("time") && !Contains("elapsed"));

  // A different seed draws different builds (the check above can tell runs apart).
  const std::string other = dir.file("other.json");
  REQUIRE(lotwise_cli({"run", design, "-n", "5000", "-s", "100", "-t", "2", "-q", "-r", other}, dir)
              .status == 0);
  CHECK(text != lotwise::testing::read_text(other));
}

TEST_CASE("cli: --no-attribution drops only the attribution", "[cli]") {
  ScratchDir dir;
  const std::string with = dir.file("with.json");
  const std::string without = dir.file("without.json");
  const std::string design = example_path("load_cell_amp_1pct.toml");
  REQUIRE(lotwise_cli({"run", design, "-n", "3000", "-q", "-r", with}, dir).status == 0);
  const auto r = lotwise_cli({"run", design, "-n", "3000", "--no-attribution", "-q", "-r", without}, dir);
  INFO("stderr: " << r.err);
  REQUIRE(r.status == 0);
  auto a = nlohmann::json::parse(lotwise::testing::read_text(with));
  auto b = nlohmann::json::parse(lotwise::testing::read_text(without));
  CHECK(a.contains("attribution"));
  CHECK_FALSE(b.contains("attribution"));
  // Everything else is the same run.
  CHECK(a.at("yield") == b.at("yield"));
  CHECK(a.at("measurements") == b.at("measurements"));
  CHECK(a.at("specs") == b.at("specs"));
}

TEST_CASE("cli: --require-yield sets the exit status", "[cli]") {
  ScratchDir dir;
  // 1 % resistors against a +-0.5 % gain window: far below 99.9 %.
  const auto low = lotwise_cli(
      {"run", example_path("load_cell_amp_1pct.toml"), "-n", "2000", "-q", "--require-yield", "0.999"},
      dir);
  CHECK(low.status == 3);
  CHECK_THAT(low.err, Contains("below the required 0.999"));
  // 0.1 % resistors pass nearly every build: the lower bound is well above one half.
  const auto high = lotwise_cli(
      {"run", example_path("load_cell_amp_01pct.toml"), "-n", "2000", "-q", "--require-yield", "0.5"},
      dir);
  INFO("stderr: " << high.err);
  CHECK(high.status == 0);
  CHECK(high.err.empty());
}

#endif  // LOTWISE_CLI
