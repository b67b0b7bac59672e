// The lane solver (mna/lane_solver.hpp) and Evaluator::evaluate_lanes against the
// one-at-a-time path they replace. Both run the same arithmetic on the same reused
// pattern, so the checks here are bit-for-bit, not to a tolerance: the lanes' solutions
// against Network::factor_dc / solve_dc (and the AC pair), the lanes a poor pivot sends
// back against the pattern path's own fallback, and every measurement, status and
// saturation flag of the example designs against Evaluator::evaluate.
#include <cstdint>
#include <cstring>
#include <random>
#include <string>
#include <vector>

#include "engine_support.hpp"
#include "lotwise/lotwise.hpp"
#include "mna/lane_solver.hpp"
#include "random_networks.hpp"
#include "study/plan.hpp"

using namespace lotwise;
using namespace lotwise::testing;

namespace {

constexpr std::size_t L = detail::LaneSolver::L;

bool same_bits(double a, double b) { return std::memcmp(&a, &b, sizeof a) == 0; }
bool same_bits(const std::complex<double>& a, const std::complex<double>& b) {
  return same_bits(a.real(), b.real()) && same_bits(a.imag(), b.imag());
}

struct LaneCounts {
  int pattern = 0;   // lanes solved side by side and compared
  int fallback = 0;  // lanes a poor pivot sent back, as the one-at-a-time path did
  int invalid = 0;   // lanes with values out of range
};

}  // namespace

TEST_CASE("lanes solve random networks bit for bit as one at a time", "[fast][lanes]") {
  std::mt19937_64 rng(777);
  LaneCounts counts;
  int networks = 0;
  for (int attempt = 0; attempt < 300 && networks < 30; ++attempt) {
    const Circuit c = random_circuit(rng);
    const Network network(c);
    const std::vector<double> theta0 = nominal(c);
    const std::size_t held_opamp = c.find_element("U0");
    NetworkWorkspace ws = network.make_workspace(2);
    if (!network.prepare_dc(theta0.data(), ws) || !network.prepare_ac(theta0.data(), 1e3, ws) ||
        !network.prepare_dc(theta0.data(), ws, {held_opamp})) {
      continue;  // a singular random wiring
    }
    ++networks;
    Excitation at_value;  // every source and op-amp error at its value
    Excitation drive;
    drive.sources_at_value = false;
    drive.opamp_errors = false;
    drive.overrides = {{0, 1.0}};  // VS, the first element
    Excitation held_level;
    held_level.output_levels = {{held_opamp, 2.5}};
    const std::vector<Excitation> dc_set = {at_value, drive};
    const std::vector<Excitation> held_set = {held_level};
    const std::vector<Excitation> ac_set = {drive};
    // Every other network varies only some of its parameters (the others are constants
    // the lanes fold in once), and reads only some unknowns of the AC and held solves
    // (the lanes solve for those alone).
    const bool narrowed = networks % 2 == 0;
    std::vector<std::size_t> changing, all_unknowns(network.size()), some_unknowns;
    for (std::size_t p = 0; p < theta0.size(); ++p) {
      if (!narrowed || rng() % 2 == 0) changing.push_back(p);
    }
    for (std::size_t i = 0; i < network.size(); ++i) {
      all_unknowns[i] = i;
      if (!narrowed || rng() % 3 == 0) some_unknowns.push_back(i);
    }
    detail::LaneSolver lanes(network, theta0, changing);
    lanes.add_analysis(ws, 0.0, {}, dc_set, all_unknowns);
    lanes.add_analysis(ws, 2e4, {}, ac_set, some_unknowns);  // another frequency than the pattern's
    lanes.add_analysis(ws, 0.0, {held_opamp}, held_set, some_unknowns);
    REQUIRE(lanes.usable());
    std::vector<unsigned char> is_changing(theta0.size(), 0);
    for (const std::size_t p : changing) is_changing[p] = 1;

    for (int block = 0; block < 12; ++block) {
      const std::size_t count = 1 + static_cast<std::size_t>(block) % L;
      std::vector<std::vector<double>> thetas;
      for (std::size_t l = 0; l < count; ++l) {
        // Tolerance-sized spreads, values moved by up to 10^6 (some reused pivots turn
        // poor), and now and then a resistor out of range.
        thetas.push_back(moved(c, rng, (l % 3 == 2) ? 1e6 : 1.3));
        for (std::size_t p = 0; p < theta0.size(); ++p) {
          if (!is_changing[p]) thetas.back()[p] = theta0[p];
        }
        const std::size_t r1 = c.elements()[1].parameters.front();
        if (l == 4 && block % 2 == 0 && is_changing[r1]) thetas.back()[r1] = -1.0;
      }
      std::vector<const double*> pointers;
      for (const auto& t : thetas) pointers.push_back(t.data());
      lanes.load(pointers.data(), count);
      unsigned char ok[L];
      lanes.check(ok);
      unsigned char valid[L];
      std::copy(ok, ok + L, valid);
      unsigned char ok_dc[L], ok_ac[L], ok_held[L];
      std::copy(valid, valid + L, ok_dc);
      std::copy(valid, valid + L, ok_ac);
      std::copy(valid, valid + L, ok_held);
      lanes.solve(0, ok_dc);
      lanes.solve(1, ok_ac);
      lanes.solve(2, ok_held);
      for (std::size_t l = 0; l < count; ++l) {
        const double* theta = thetas[l].data();
        const bool in_range = network.check_values(theta) == SolveStatus::ok;
        REQUIRE(static_cast<bool>(valid[l]) == in_range);
        if (!in_range) {
          ++counts.invalid;
          continue;
        }
        auto& d = ws.data();
        // DC, every source at its value and a unit drive.
        network.factor_dc(theta, ws);
        REQUIRE(static_cast<bool>(ok_dc[l]) == (d.dc_active != Network::npos));
        if (ok_dc[l]) {
          network.solve_dc(theta, dc_set.data(), dc_set.size(), ws);
          for (std::size_t e = 0; e < dc_set.size(); ++e) {
            for (std::size_t i = 0; i < network.size(); ++i) {
              const double want = d.x(static_cast<Eigen::Index>(i), static_cast<Eigen::Index>(e));
              REQUIRE(same_bits(lanes.dc(0, e, i)[l], want));
            }
          }
          ++counts.pattern;
        } else {
          ++counts.fallback;
        }
        // AC at 20 kHz.
        network.factor_ac(theta, 2e4, ws);
        REQUIRE(static_cast<bool>(ok_ac[l]) == (d.ac_active != Network::npos));
        if (ok_ac[l]) {
          network.solve_ac(theta, ac_set.data(), 1, ws);
          for (const std::size_t i : some_unknowns) {
            REQUIRE(same_bits(lanes.ac(1, 0, i)[l], d.ac_x(static_cast<Eigen::Index>(i), 0)));
          }
        }
        // DC with U0's output held at 2.5 V.
        network.factor_dc(theta, ws, {held_opamp});
        REQUIRE(static_cast<bool>(ok_held[l]) == (d.dc_active != Network::npos));
        if (ok_held[l]) {
          network.solve_dc(theta, held_set.data(), 1, ws);
          for (const std::size_t i : some_unknowns) {
            REQUIRE(same_bits(lanes.dc(2, 0, i)[l], d.x(static_cast<Eigen::Index>(i), 0)));
          }
        }
      }
    }
  }
  CHECK(networks == 30);
  // Every kind of lane was met: solved side by side, sent back, out of range.
  CHECK(counts.pattern > 1000);
  CHECK(counts.fallback > 0);
  CHECK(counts.invalid > 0);
}

namespace {

// Every parameter moved: positive ones by a factor in [1/f, f], the others (offsets,
// sources, limits) by up to +-5 % of their size, or +-1 mV where they are zero.
std::vector<double> spread(const Circuit& c, std::mt19937_64& rng, double f) {
  std::uniform_real_distribution<double> unit(-1.0, 1.0);
  std::vector<double> theta = nominal(c);
  for (std::size_t i = 0; i < theta.size(); ++i) {
    if (c.parameters()[i].positive) {
      theta[i] *= std::pow(f, unit(rng));
    } else {
      theta[i] += theta[i] != 0.0 ? 0.05 * theta[i] * unit(rng) : 1e-3 * unit(rng);
    }
  }
  return theta;
}

}  // namespace

TEST_CASE("evaluate_lanes gives every example design's values bit for bit", "[fast][lanes]") {
  const std::vector<std::string> designs = {
      "antialias_lowpass", "bridge_stage_discrete", "bridge_stage_network", "load_cell_amp_01pct",
      "load_cell_amp_1pct", "over_temperature_trip", "sump_pump_level_switch"};
  std::vector<std::string> paths;
  for (const std::string& name : designs) paths.push_back(std::string(LOTWISE_EXAMPLES_DIR) + "/" + name + ".toml");
  // Values read from the probes alone (finished side by side) beside an output limit.
  paths.push_back(data_path("railed_diff_amp.toml"));
  std::mt19937_64 rng(4242);
  int compared = 0, compared_narrowed = 0, saturated = 0, failed = 0, railed = 0;
  for (const std::string& path : paths) {
    INFO(path);
    const Study study(load_design(path));
    const detail::Plan plan = detail::make_plan(study.network(), study.design().measurements);
    detail::Evaluator lanes(study.network(), plan);
    detail::Evaluator single(study.network(), plan);
    REQUIRE(lanes.uses_lanes());
    // As a run uses it: only the design's varied parameters change, the rest are
    // constants folded in once.
    const auto& params = study.network().circuit().parameters();
    std::vector<std::size_t> varied;
    for (const std::string& v : study.varied_parameters()) {
      for (std::size_t p = 0; p < params.size(); ++p) {
        if (params[p].name == v) varied.push_back(p);
      }
    }
    REQUIRE(!varied.empty());
    std::vector<unsigned char> is_varied(params.size(), 0);
    for (const std::size_t p : varied) is_varied[p] = 1;
    detail::Evaluator narrowed(study.network(), plan, &varied);
    const std::vector<double> nominal_theta = study.nominal_parameters();
    REQUIRE(narrowed.uses_lanes());
    const std::size_t m = plan.measurements.size();
    for (int block = 0; block < 40; ++block) {
      const std::size_t count = 1 + static_cast<std::size_t>(block) % L;
      std::vector<std::vector<double>> thetas, values(count, std::vector<double>(m));
      std::vector<const double*> in;
      std::vector<double*> out;
      for (std::size_t l = 0; l < count; ++l) {
        thetas.push_back(spread(study.network().circuit(), rng, l == 3 ? 50.0 : 1.05));
      }
      if (count > 2 && block % 5 == 0) {
        // A part out of range in one lane: that lane alone reports it.
        for (std::size_t p = 0; p < params.size(); ++p) {
          if (params[p].positive) {
            thetas[2][p] = 0.0;
            break;
          }
        }
      }
      for (std::size_t l = 0; l < count; ++l) {
        in.push_back(thetas[l].data());
        out.push_back(values[l].data());
      }
      // The block through `evaluator`'s lanes against `single`, build by build.
      auto compare = [&](detail::Evaluator& evaluator, int& counter) {
        SolveStatus statuses[L];
        evaluator.evaluate_lanes(in.data(), out.data(), statuses, count);
        for (std::size_t l = 0; l < count; ++l) {
          std::vector<double> want(m);
          const SolveStatus status = single.evaluate(thetas[l].data(), want.data());
          REQUIRE(statuses[l] == status);
          for (std::size_t i = 0; i < m; ++i) {
            REQUIRE(same_bits(values[l][i], want[i]));
            REQUIRE(evaluator.saturated_lane(l)[i] == single.saturated()[i]);
          }
          REQUIRE(evaluator.saturated_opamp_lane(l) == single.saturated_opamp());
          ++counter;
          if (&evaluator == &lanes) {
            saturated += single.any_saturated();
            failed += status != SolveStatus::ok;
            railed += single.any_saturated() && path == paths.back();
          }
        }
      };
      compare(lanes, compared);
      // The same builds with only the varied parameters moved, through `narrowed`.
      for (auto& theta : thetas) {
        for (std::size_t p = 0; p < params.size(); ++p) {
          if (!is_varied[p]) theta[p] = nominal_theta[p];
        }
      }
      compare(narrowed, compared_narrowed);
    }
  }
  std::size_t lanes_per_design = 0;  // 40 blocks of 1..L lanes
  for (std::size_t block = 0; block < 40; ++block) lanes_per_design += 1 + block % L;
  CHECK(compared == static_cast<int>(paths.size() * lanes_per_design));
  CHECK(compared_narrowed == compared);
  CHECK(saturated > 0);
  CHECK(railed > 0);
  CHECK(failed > 0);
}
