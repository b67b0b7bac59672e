// Bad design input: every error must name the place (FILE:LINE for design files) and
// the key, part, node or measurement at fault. The files in tests/data/bad/ each differ
// from a working difference amplifier by one fault.
#include <catch2/catch.hpp>

#include <string>

#include "interface_support.hpp"
#include "lotwise/lotwise.hpp"
#include "test_support.hpp"

using Catch::Contains;
using Catch::StartsWith;
using lotwise::testing::bad_design_path;

namespace {

// The message of the DesignError that loading `file` throws.
std::string load_error(const std::string& file) {
  try {
    lotwise::load_design(bad_design_path(file));
  } catch (const lotwise::DesignError& e) {
    return e.what();
  }
  FAIL("loading " << file << " threw no DesignError");
  return {};
}

// The message of the CircuitError that compiling `file` into a study throws; the file
// itself must load.
std::string study_error(const std::string& file) {
  lotwise::Design design = lotwise::load_design(bad_design_path(file));
  try {
    lotwise::Study study(std::move(design));
  } catch (const lotwise::CircuitError& e) {
    return e.what();
  }
  FAIL("the study of " << file << " threw no CircuitError");
  return {};
}

// "PATH:LINE:" as the message must begin.
std::string at_line(const std::string& file, int line) {
  return bad_design_path(file) + ":" + std::to_string(line) + ":";
}

}  // namespace

TEST_CASE("design file: the reference design loads and compiles", "[design]") {
  // The control for the bad files: the design they were made from is sound.
  const lotwise::Study study(lotwise::load_design(lotwise::testing::data_path("diff_amp.toml")));
  const auto& d = study.design();
  CHECK(d.title == "Difference amplifier, gain 10, 1 % resistors");
  REQUIRE(d.circuit.elements().size() == 7);
  CHECK(d.circuit.elements()[0].name == "VP");  // parts keep the order of the file
  CHECK(d.circuit.elements()[6].name == "R4");
  CHECK(d.run.samples == 2000);
  CHECK(d.run.seed == 11);
  REQUIRE(study.nominal_values().size() == 2);
  // Ideal op-amp, matched ratios: differential gain R2/R1 = 10.
  // source: Sedra & Smith, Microelectronic Circuits, ch. 2 (difference amplifier)
  CHECK_THAT(study.nominal_values()[0], lotwise::testing::close_rel(10.0, 1e-12));
  CHECK(study.varied_parameters() == std::vector<std::string>{"R1", "R2", "R3", "R4"});
}

TEST_CASE("design file: the examples load and compile", "[design]") {
  for (const char* name : {"load_cell_amp_1pct.toml", "load_cell_amp_01pct.toml"}) {
    INFO(name);
    CHECK_NOTHROW(lotwise::Study(lotwise::load_design(lotwise::testing::example_path(name))));
  }
}

TEST_CASE("design file: an unknown key names the key and the part and the line", "[design]") {
  const std::string m = load_error("unknown_key.toml");
  CHECK_THAT(m, StartsWith(at_line("unknown_key.toml", 12)));
  CHECK_THAT(m, Contains("'vaule'") && Contains("part 'R2'"));
  CHECK_THAT(m, Contains("value"));  // the allowed keys are listed
}

TEST_CASE("design file: an unknown part type is named with the part", "[design]") {
  const std::string m = load_error("unknown_part_type.toml");
  CHECK_THAT(m, StartsWith(at_line("unknown_part_type.toml", 7)));
  CHECK_THAT(m, Contains("'resistr'") && Contains("part 'R2'") && Contains("resistor"));
}

TEST_CASE("design file: a measurement output on an unknown node", "[design]") {
  const std::string m = load_error("unknown_output_node.toml");
  CHECK_THAT(m, StartsWith(at_line("unknown_output_node.toml", 11)));
  CHECK_THAT(m, Contains("'outt'") && Contains("measurement 'gain'"));
}

TEST_CASE("design file: a floating node is named when the study is compiled", "[design]") {
  const std::string m = study_error("floating_node.toml");
  CHECK_THAT(m, Contains("'shield'") && Contains("no DC path to ground"));
  CHECK_THAT(m, Contains("C1"));  // what the node does connect to
}

TEST_CASE("design file: a loop of voltage sources names both sources", "[design]") {
  const std::string m = study_error("voltage_loop.toml");
  CHECK_THAT(m, Contains("loop of voltage sources") && Contains("VP") && Contains("VBIAS"));
}

TEST_CASE("design file: a non-positive resistance names the part and the line", "[design]") {
  const std::string m = load_error("negative_resistance.toml");
  CHECK_THAT(m, StartsWith(at_line("negative_resistance.toml", 9)));
  CHECK_THAT(m, Contains("part 'R4'") && Contains("greater than zero"));
  CHECK_THAT(m, Contains("-100000 ohm"));  // the value as given, readably
}

TEST_CASE("design file: a malformed number names the text and the line", "[design]") {
  const std::string m = load_error("malformed_number.toml");
  CHECK_THAT(m, StartsWith(at_line("malformed_number.toml", 8)));
  CHECK_THAT(m, Contains("'4.9.9k'") && Contains("part 'R3'"));
}

TEST_CASE("design file: a spec on a missing measurement lists the existing ones", "[design]") {
  const std::string m = load_error("spec_without_measurement.toml");
  CHECK_THAT(m, StartsWith(at_line("spec_without_measurement.toml", 22)));
  CHECK_THAT(m, Contains("'gian'") && Contains("measurements: gain, cmrr"));
}

TEST_CASE("design file: an op-amp without feedback is reported singular", "[design]") {
  const std::string m = study_error("open_loop_opamp.toml");
  CHECK_THAT(m, Contains("singular") && Contains("feedback"));
  CHECK_THAT(m, Contains("node 'out'"));
}

TEST_CASE("design file: invalid TOML gives line and column", "[design]") {
  const std::string m = load_error("invalid_toml.toml");
  CHECK_THAT(m, StartsWith(at_line("invalid_toml.toml", 4) + "41:"));
  CHECK_THAT(m, Contains("not valid TOML"));
}

TEST_CASE("design file: a design without [parts] says so", "[design]") {
  const std::string m = load_error("missing_parts.toml");
  CHECK_THAT(m, StartsWith(bad_design_path("missing_parts.toml") + ":"));
  CHECK_THAT(m, Contains("no [parts] section"));
}

TEST_CASE("design file: a [[vary]] target that matches nothing", "[design]") {
  const std::string m = load_error("vary_matches_nothing.toml");
  CHECK_THAT(m, StartsWith(at_line("vary_matches_nothing.toml", 15)));
  CHECK_THAT(m, Contains("[[vary]] number 2") && Contains("'Q*'") && Contains("R1"));
}

TEST_CASE("design file: a relative tolerance on a zero-nominal offset", "[design]") {
  const std::string m = load_error("relative_offset.toml");
  CHECK_THAT(m, StartsWith(at_line("relative_offset.toml", 11)));
  CHECK_THAT(m, Contains("'U1.offset'") && Contains("nominal value of 0") &&
                    Contains("absolute tolerance"));
}

TEST_CASE("design file: an unknown op-amp grade lists the defined grades", "[design]") {
  const std::string m = load_error("unknown_grade.toml");
  CHECK_THAT(m, StartsWith(at_line("unknown_grade.toml", 13)));
  CHECK_THAT(m, Contains("'precison'") && Contains("part 'U1'") &&
                    Contains("general, precision"));
}

TEST_CASE("design file: a measurement with the wrong number of inputs", "[design]") {
  const std::string m = load_error("wrong_input_count.toml");
  CHECK_THAT(m, StartsWith(at_line("wrong_input_count.toml", 11)));
  CHECK_THAT(m, Contains("measurement 'gain'") && Contains("needs 2") && Contains("got 1"));
}

TEST_CASE("design file: a parameter spread by two variations names both", "[design]") {
  // The reader tracks which [[vary]] spreads each parameter, so the second one's line is named.
  const std::string m = load_error("overlapping_vary.toml");
  CHECK_THAT(m, StartsWith(bad_design_path("overlapping_vary.toml") + ":"));
  CHECK_THAT(m, Contains("'R2'") && Contains("[[vary]] number 1") && Contains("[[vary]] number 2"));
}

TEST_CASE("a design built in code with a parameter spread twice is rejected by the study",
          "[design]") {
  lotwise::Design design = lotwise::load_design(LOTWISE_TEST_DATA_DIR "/diff_amp.toml");
  design.variations.push_back(design.variations.front());
  CHECK_THROWS_WITH(lotwise::Study(std::move(design)),
                    Contains("is spread by both variation 1 and variation 2"));
}

TEST_CASE("design file: TOML text is read with its source name in messages", "[design]") {
  const std::string text =
      "title = \"typo at the top\"\n"
      "[parts]\n"
      "R1 = { type = \"resistor\", value = \"1k\", nodes = [\"a\", \"gnd\"] }\n"
      "[spec]\n"
      "x = { min = 1 }\n";
  CHECK_THROWS_WITH(lotwise::parse_design(text, "inline.toml"),
                    StartsWith("inline.toml:4:") && Contains("unknown key 'spec'") &&
                        Contains("specs"));
  // Without a name the messages still say where.
  CHECK_THROWS_WITH(lotwise::parse_design(text), StartsWith("<design>:4:"));
}

TEST_CASE("design file: a file that does not exist", "[design]") {
  const std::string path = bad_design_path("no_such_design.toml");
  CHECK_THROWS_AS(lotwise::load_design(path), lotwise::DesignError);
  CHECK_THROWS_WITH(lotwise::load_design(path), Contains(path) && Contains("cannot open"));
}

TEST_CASE("design file: a spec whose min lies above its max shows both readably", "[design]") {
  const std::string text =
      "[parts]\n"
      "VIN = { type = \"voltage_source\", value = 1, nodes = [\"in\", \"gnd\"] }\n"
      "R1 = { type = \"resistor\", value = \"1k\", nodes = [\"in\", \"out\"] }\n"
      "R2 = { type = \"resistor\", value = \"1k\", nodes = [\"out\", \"gnd\"] }\n"
      "[measurements.level]\n"
      "kind = \"node_voltage\"\n"
      "output = \"out\"\n"
      "[specs]\n"
      "level = { min = \"5u\", max = \"1u\" }\n";
  CHECK_THROWS_WITH(lotwise::parse_design(text, "spec.toml"),
                    StartsWith("spec.toml:9:") && Contains("spec on 'level'") &&
                        Contains("min (5e-06)") && Contains("max (1e-06)"));
}
