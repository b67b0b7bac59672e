// The design-file keys of the variation model, their errors, and what the report and
// summary show of them.
#include <string>

#include <nlohmann/json.hpp>

#include "variation_support.hpp"

using namespace lotwise;
using namespace lotwise::testing;
using Catch::Contains;

namespace {

const char* const header = R"(
[parts]
I1 = { type = "current_source", value = 1, nodes = ["gnd", "a"] }
R1 = { type = "resistor", value = "10k", nodes = ["a", "gnd"], series = "E96" }
I2 = { type = "current_source", value = 1, nodes = ["gnd", "b"] }
R2 = { type = "resistor", value = "10k", nodes = ["b", "gnd"] }
I3 = { type = "current_source", value = 1, nodes = ["gnd", "c"] }
R3 = { type = "resistor", value = "4.7k", nodes = ["c", "gnd"], series = "E12" }
VS = { type = "voltage_source", value = 1, nodes = ["s", "gnd"] }
U1 = { type = "opamp", plus = "s", minus = "o", output = "o" }
[measurements.va]
kind = "node_voltage"
output = "a"
)";

Design parse(const std::string& rest) { return parse_design(std::string(header) + rest, "test.toml"); }

void check_error(const std::string& rest, const std::string& what) {
  CAPTURE(rest);
  CHECK_THROWS_WITH(parse(rest), Contains("test.toml:") && Contains(what));
}

}  // namespace

TEST_CASE("design file: laws, letters, lots, networks, coefficients", "[fast][design_file]") {
  const Design d = parse(R"(
[[vary]]
parameters = ["R1", "R2"]
tolerance = "B"
ratio_tolerance = "0.01%"
lot_tolerance = "0.05%"
lot_distribution = "uniform"
tempco = "25ppm/K"
tempco_tolerance = "10ppm"
tempco_tracking = "2ppm/K"
sigmas = 2

[[vary]]
parameters = "R3"
tolerance = "J"
distribution = "binned"
inner_tolerance = "F"

[[vary]]
parameters = "U1.offset"
distribution = "fixed"
tempco = "5uV/K"
tempco_tolerance = "5u"
tempco_distribution = "triangular"

[[correlate]]
parameters = ["R1", "R3"]
coefficient = 0.4

[temperature]
reference = 20
operating = [-40, 20, 85]

[run]
sampler = "sobol"
replicates = 8
)");
  REQUIRE(d.variations.size() == 3);
  const Variation& net = d.variations[0];
  CHECK(net.tolerance == 0.001);  // source: IEC 60062 letter B, 0.1 %
  CHECK(net.relative);
  CHECK_THAT(net.ratio_tolerance, close_rel(1e-4, 1e-12));
  CHECK_THAT(net.lot_tolerance, close_rel(5e-4, 1e-12));
  CHECK(net.lot_distribution == Distribution::uniform);
  CHECK_THAT(net.tempco, close_rel(25e-6, 1e-12));
  CHECK(net.tempco_relative);
  CHECK_THAT(net.tempco_tolerance, close_rel(10e-6, 1e-12));
  CHECK_THAT(net.tempco_tracking, close_rel(2e-6, 1e-12));
  CHECK(net.sigmas == 2.0);
  const Variation& binned = d.variations[1];
  CHECK(binned.distribution == Distribution::binned);
  CHECK(binned.tolerance == 0.05);
  CHECK(binned.inner_tolerance == 0.01);
  const Variation& drift = d.variations[2];
  CHECK(drift.distribution == Distribution::fixed);
  CHECK_FALSE(drift.tempco_relative);
  CHECK_THAT(drift.tempco, close_rel(5e-6, 1e-12));
  CHECK(drift.tempco_distribution == Distribution::triangular);
  REQUIRE(d.correlations.size() == 1);
  CHECK(d.correlations[0].coefficient == 0.4);
  CHECK(d.temperature.reference == 20.0);
  CHECK(d.temperature.operating == std::vector<double>{-40.0, 20.0, 85.0});
  CHECK(d.run.sampler == Sampler::sobol);
  CHECK(d.run.replicates == 8);

  // It compiles and runs with the file's sampler; the report and summary carry it.
  const Study s{Design(d)};
  CHECK(s.varied_parameters() == std::vector<std::string>{"R1", "R2", "R3", "U1.offset"});
  const auto coordinates = s.coordinate_names();
  CHECK(std::find(coordinates.begin(), coordinates.end(), "lot of R1,R2") != coordinates.end());
  CHECK(std::find(coordinates.begin(), coordinates.end(), "network of R1,R2") != coordinates.end());
  CHECK(std::find(coordinates.begin(), coordinates.end(), "U1.offset.tempco") != coordinates.end());
  RunOptions o;
  o.samples = 512;
  o.sampler = d.run.sampler;
  o.replicates = d.run.replicates;
  const YieldResult r = s.run(o);
  CHECK(r.replicates == 8);
  REQUIRE(r.temperatures.size() == 3);
  const auto j = nlohmann::json::parse(report_json(s, r));
  CHECK(j.at("run").at("sampler") == "sobol");
  CHECK(j.at("run").at("replicates") == 8);
  CHECK(j.at("yield").contains("standard_error"));
  CHECK(j.at("measurements").at(0).at("mean_standard_error").get<double>() > 0.0);
  CHECK(j.at("temperatures").size() == 3);
  CHECK(j.at("temperatures").at(0).at("temperature") == -40.0);
  CHECK(j.at("design").at("temperature").at("reference") == 20.0);
  const std::string table = summary_table(s, r);
  CHECK_THAT(table, Contains("sobol sampler, 8 replicates") && Contains("-40 degC") &&
                        Contains("Standard error of the mean"));
}

TEST_CASE("design file: a range of temperatures and Latin hypercube", "[fast][design_file]") {
  const Design d = parse(R"(
[[vary]]
parameters = "R*"
tolerance = "1%"
distribution = "triangular"
[temperature]
range = [-20, 70]
[run]
sampler = "latin_hypercube"
)");
  CHECK(d.temperature.drawn);
  CHECK(d.temperature.low == -20.0);
  CHECK(d.temperature.high == 70.0);
  CHECK(d.temperature.reference == 25.0);
  CHECK(d.run.sampler == Sampler::latin_hypercube);
  CHECK(d.run.replicates == 0);
  CHECK(Study(Design(d)).run().replicates == 16);
}

TEST_CASE("design file: variation errors name the place", "[fast][design_file]") {
  check_error("[[vary]]\nparameters = \"R1\"\ntolerance = \"1%\"\ndistribution = \"gauss\"\n",
              "unknown distribution 'gauss' (normal, uniform, truncated_normal, triangular, "
              "log_normal, binned, fixed)");
  check_error("[[vary]]\nparameters = \"R1\"\ntolerance = \"Q\"\n", "not an IEC 60062 tolerance letter");
  check_error("[[vary]]\nparameters = \"R1\"\ntolerance = \"5%\"\ndistribution = \"binned\"\n",
              "0 < inner_tolerance < tolerance");
  check_error("[[vary]]\nparameters = [\"R1\", \"R2\"]\ntolerance = \"1%\"\nratio_tolerance = \"1u\"\n",
              "ratio_tolerance must be relative");
  check_error("[[vary]]\nparameters = \"R1\"\ndistribution = \"fixed\"\ntolerance = \"1%\"\n",
              "a fixed parameter takes no tolerance");
  check_error("[[vary]]\nparameters = \"R1\"\ntolerance = \"1%\"\ndistribution = \"uniform\"\nsigmas = 3\n",
              "sigmas applies to the normal-shaped distributions only");
  check_error("[[vary]]\nparameters = \"R1\"\ntolerance = \"1%\"\ntempco = \"50ppm\"\ntempco_tolerance = \"1u\"\n",
              "tempco_tolerance must be given like tempco");
  check_error("[[vary]]\nparameters = \"R1\"\ntolerance = \"1%\"\nlot_tolerance = \"2\"\n",
              "lot_tolerance must be relative");
  check_error("[[vary]]\nparameters = \"U1.offset\"\ndistribution = \"fixed\"\ntempco = \"5ppm\"\n",
              "relative temperature coefficient cannot move it");
  check_error("[[vary]]\nparameters = \"R1\"\ntolerance = \"1%\"\ntempco = \"50ppm/hour\"\n",
              "tempco: malformed number");
}

TEST_CASE("design file: correlation, temperature, run and series errors", "[fast][design_file]") {
  const std::string vary = "[[vary]]\nparameters = \"R*\"\ntolerance = \"1%\"\n";
  check_error(vary + "[[correlate]]\nparameters = [\"R1\", \"R2\"]\ncoefficient = 1\n",
              "[[correlate]] number 1: the coefficient must lie strictly between -1 and 1");
  check_error(vary + "[[correlate]]\nparameters = [\"R1\", \"U1.offset\"]\ncoefficient = 0.5\n",
              "[[correlate]] number 1: 'U1.offset' has no part-to-part spread");
  check_error(vary + "[[correlate]]\nparameters = [\"R1\", \"R2\"]\ncoefficient = 0.9\n"
                     "[[correlate]]\nparameters = [\"R1\", \"R3\"]\ncoefficient = 0.9\n"
                     "[[correlate]]\nparameters = [\"R2\", \"R3\"]\ncoefficient = -0.9\n",
              "not positive definite");
  check_error(vary + "[[correlate]]\nparameters = [\"R1\", \"R7\"]\ncoefficient = 0.5\n",
              "target 'R7' matches no parameter");
  check_error("[temperature]\noperating = 25\nrange = [0, 50]\n", "not both");
  check_error("[temperature]\nrange = [50]\n", "range must be [low, high]");
  check_error("[temperature]\nwhen = 25\n", "unknown key 'when' in [temperature]");
  check_error("[run]\nsampler = \"halton\"\n", "unknown sampler 'halton' (monte_carlo, sobol, latin_hypercube)");
  check_error("[run]\nreplicates = 0\n", "[run] replicates must be a whole number >= 1");
  CHECK_THROWS_WITH(parse_design(R"(
[parts]
I1 = { type = "current_source", value = 1, nodes = ["gnd", "a"] }
R1 = { type = "resistor", value = "4.83k", nodes = ["a", "gnd"], series = "E96" }
)", "s.toml"),
                    Contains("s.toml:4:") && Contains("4.83k is not an E96 value (nearest: 4.87k)"));
  CHECK_THROWS_WITH(parse_design(R"(
[parts]
I1 = { type = "current_source", value = 1, nodes = ["gnd", "a"], series = "E12" }
R1 = { type = "resistor", value = "4.7k", nodes = ["a", "gnd"] }
)", "s.toml"),
                    Contains("unknown key 'series'"));
}
