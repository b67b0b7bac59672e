#include "mna/lane_solver.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <type_traits>

#include "cpu_dispatch.hpp"
#include "lotwise/error.hpp"
#include "mna/lane_ops.hpp"

namespace lotwise::detail {

namespace {

constexpr std::size_t npos = Network::npos;

bool contains(const std::vector<std::size_t>& sorted, std::size_t p) {
  return p != npos && std::binary_search(sorted.begin(), sorted.end(), p);
}

}  // namespace

LaneSolver::LaneSolver(const Network& network, const std::vector<double>& nominal,
                       const std::vector<std::size_t>& changing)
    : layout_(network.layout()), changing_(changing) {
  const auto& params = layout_.circuit.parameters();
  if (nominal.size() != params.size()) throw Error("internal: LaneSolver needs every nominal value");
  std::sort(changing_.begin(), changing_.end());
  changing_.erase(std::unique(changing_.begin(), changing_.end()), changing_.end());
  for (const std::size_t p : changing_) {
    if (p >= params.size()) throw Error("internal: LaneSolver given an unknown parameter");
    positive_.push_back(params[p].positive ? 1 : 0);
  }
  theta_.resize(params.size() * L);
  for (std::size_t p = 0; p < params.size(); ++p) {
    std::fill(theta_.begin() + static_cast<std::ptrdiff_t>(p * L),
              theta_.begin() + static_cast<std::ptrdiff_t>((p + 1) * L), nominal[p]);
  }
  // The values that never change are checked once; only the op-amps whose limits can
  // move are checked per lane.
  usable_ = network.check_values(nominal.data()) == SolveStatus::ok;
  for (const auto& o : layout_.opamps) {
    if (contains(changing_, o.high) || contains(changing_, o.headroom_high) ||
        contains(changing_, o.low) || contains(changing_, o.headroom_low)) {
      limits_.push_back(&o);
    }
  }
}

template <typename T>
void LaneSolver::compile_rhs(LaneAnalysis<T>& lanes, const std::vector<Excitation>& excitations,
                             const unsigned char* held_row) const {
  // Network's right-hand-side rules (visit_rhs), in their order, each choice made once.
  const std::size_t count = excitations.size();
  const auto& lu = lanes.pattern->lu;
  for (std::size_t e = 0; e < count; ++e) {
    auto at = [&](std::size_t row) {
      return static_cast<std::uint32_t>((lu.step_of_row(row) * count + e) * L);
    };
    visit_rhs(
        layout_, excitations[e], held_row,
        [&](std::size_t row, std::size_t p, double sign) {
          lanes.rhs.push_back(
              RhsOp{RhsOp::add_parameter, at(row), static_cast<std::uint32_t>(p), sign});
        },
        [&](std::size_t row, double value) {
          lanes.rhs.push_back(RhsOp{RhsOp::add_constant, at(row), 0, value});
        },
        [&](std::size_t row, double level) {
          lanes.rhs.push_back(RhsOp{RhsOp::set_constant, at(row), 0, level});
        });
  }
}

void LaneSolver::add_analysis(NetworkWorkspace& ws, double frequency,
                              const std::vector<std::size_t>& held,
                              const std::vector<Excitation>& excitations) {
  auto& d = ws.data();
  const std::size_t n = layout_.size;
  auto shape = [&](auto& lanes) {
    const auto& lu = lanes.pattern->lu;
    lanes.frequency = frequency;
    lanes.excitations = excitations.size();
    lanes.values.resize(lu.nonzeros() * L);
    lanes.inverse.resize(n * L);
    lanes.reciprocal.resize(lanes.pattern->fill.inverse.size() * L);
    // Which slots vary and which must be refilled (see LaneAnalysis).
    const auto& fill = lanes.pattern->fill;
    std::vector<unsigned char> varies(lu.nonzeros(), 0), written(lu.nonzeros(), 0);
    for (const auto* terms : {&fill.real_reciprocal, &fill.real_value, &fill.imag_value,
                              &fill.imag_reciprocal}) {
      for (const auto& t : *terms) varies[t.slot] = 1;
    }
    for (const auto s : lu.written_slots()) written[s] = 1;
    for (std::size_t s = 0; s < lu.nonzeros(); ++s) {
      if (varies[s]) lanes.varying.push_back(static_cast<std::uint32_t>(s));
      if (varies[s] || written[s]) lanes.refill.push_back(static_cast<std::uint32_t>(s));
      if (!varies[s]) lanes.constant_scale2 = std::max(lanes.constant_scale2, magnitude2(fill.constants[s]));
      for (std::size_t l = 0; l < L; ++l) lanes.values[s * L + l] = fill.constants[s];
    }
    lanes.y.assign(excitations.size() * n * L, typename std::decay_t<decltype(lanes.y)>::value_type(0));
  };
  if (frequency == 0.0) {
    const detail::Pattern<double>* found = nullptr;
    for (const auto& p : d.dc_patterns) {
      if (p.held == held) found = &p;
    }
    if (!found || !found->lu.ready()) {
      usable_ = false;
      return;
    }
    std::vector<unsigned char> held_row(n, 0);
    for (const std::size_t e : held) held_row[layout_.opamps[layout_.opamp_of_element[e]].branch] = 1;
    LaneAnalysis<double> lanes;
    lanes.pattern = found;
    shape(lanes);
    compile_rhs(lanes, excitations, held_row.data());
    analyses_.emplace_back(false, dc_.size());
    dc_.push_back(std::move(lanes));
  } else {
    if (d.ac_patterns.empty() || !d.ac_patterns[0].lu.ready()) {
      usable_ = false;
      return;
    }
    LaneAnalysis<std::complex<double>> lanes;
    lanes.pattern = &d.ac_patterns[0];
    shape(lanes);
    compile_rhs(lanes, excitations, nullptr);
    analyses_.emplace_back(true, ac_.size());
    ac_.push_back(std::move(lanes));
  }
}

void LaneSolver::load(const double* const* thetas, std::size_t count) {
  for (const std::size_t p : changing_) {
    double* lanes = &theta_[p * L];
    for (std::size_t l = 0; l < L; ++l) lanes[l] = thetas[l < count ? l : 0][p];
  }
}

void LaneSolver::check(unsigned char* ok) const {
  // In range: finite, and above 0 where only positive values are physical; as masks,
  // without branches (a NaN fails both comparisons).
  constexpr double inf = std::numeric_limits<double>::infinity();
  double good[L];
  for (std::size_t l = 0; l < L; ++l) good[l] = 1.0;
  for (std::size_t k = 0; k < changing_.size(); ++k) {
    const double* __restrict v = &theta_[changing_[k] * L];
    const double above = positive_[k] != 0 ? 0.0 : -inf;
    for (std::size_t l = 0; l < L; ++l) {
      const double in = (v[l] > above && v[l] < inf) ? 1.0 : 0.0;
      good[l] = std::min(good[l], in);
    }
  }
  for (std::size_t l = 0; l < L; ++l) ok[l] = good[l] != 0.0 ? 1 : 0;
  // A swing that has closed up is out of range, as in Network::check_values.
  for (const OpAmpOutput* o : limits_) {
    for (std::size_t l = 0; l < L; ++l) {
      const OutputLimits lim = limits_of(*o, [&](std::size_t p) { return theta_[p * L + l]; });
      if (!(lim.high > lim.low)) ok[l] = 0;
    }
  }
}

template <typename T>
void LaneSolver::run(LaneAnalysis<T>& lanes, unsigned char* ok) {
  // The fill of Network's factor_pattern, per lane.
  const auto& f = lanes.pattern->fill;
  T* v = lanes.values.data();
  for (const std::uint32_t s : lanes.refill) lanes_set<L>(v + s * L, f.constants[s]);
  double* r = lanes.reciprocal.data();
  for (std::size_t k = 0; k < f.inverse.size(); ++k) {
    const double* __restrict p = &theta_[f.inverse[k] * L];
    double* __restrict out = r + k * L;
    for (std::size_t l = 0; l < L; ++l) out[l] = 1.0 / p[l];
  }
  for (const auto& t : f.real_reciprocal) lanes_add_scaled<L>(v + t.slot * L, t.factor, r + t.index * L);
  for (const auto& t : f.real_value) {
    lanes_add_scaled<L>(v + t.slot * L, t.factor, theta_.data() + t.index * L);
  }
  if constexpr (!std::is_same<T, double>::value) {
    const double frequency = lanes.frequency;
    for (const auto& t : f.imag_value) {
      for (std::size_t l = 0; l < L; ++l) {
        v[t.slot * L + l] += T(0.0, frequency * t.factor * theta_[t.index * L + l]);
      }
    }
    for (const auto& t : f.imag_reciprocal) {
      for (std::size_t l = 0; l < L; ++l) {
        v[t.slot * L + l] += T(0.0, frequency * t.factor * r[t.index * L + l]);
      }
    }
  }
  // The dense path's singularity scale, n eps max |a_ij|, per lane.
  double scale2[L];
  // The maximum is exact and NaN never enters it, so taking the constants' part once
  // gives the same value as a pass over every entry.
  for (std::size_t l = 0; l < L; ++l) scale2[l] = lanes.constant_scale2;
  for (const std::uint32_t s : lanes.varying) {
    for (std::size_t l = 0; l < L; ++l) scale2[l] = std::max(scale2[l], magnitude2(v[s * L + l]));
  }
  const auto& lu = lanes.pattern->lu;
  const double n_eps = static_cast<double>(lu.size()) * std::numeric_limits<double>::epsilon();
  double tiny[L];
  for (std::size_t l = 0; l < L; ++l) tiny[l] = n_eps * std::sqrt(scale2[l]);
  lu.template factor_lanes<L>(v, lanes.inverse.data(), tiny, ok);

  // The right-hand sides, in step order, then one pass of triangular solves for all.
  T* y = lanes.y.data();
  // The last solve left its solutions in y: clear it (a loop of vector stores; a call
  // to memset costs more at this size).
  for (std::size_t i = 0; i < lanes.y.size(); i += L) lanes_set<L>(y + i, T(0));
  for (const RhsOp& op : lanes.rhs) {
    T* row = y + op.offset;
    switch (op.kind) {
      case RhsOp::add_parameter:
        lanes_add_scaled<L>(row, op.value, theta_.data() + static_cast<std::size_t>(op.parameter) * L);
        break;
      case RhsOp::add_constant:
        for (std::size_t l = 0; l < L; ++l) row[l] += op.value;
        break;
      case RhsOp::set_constant: lanes_set<L>(row, T(op.value)); break;
    }
  }
  lu.template solve_lanes<L>(v, lanes.inverse.data(), y, lanes.excitations);
}

LOTWISE_AVX2_CLONES void LaneSolver::run_dc(LaneAnalysis<double>& lanes, unsigned char* ok) {
  run(lanes, ok);
}

LOTWISE_AVX2_CLONES void LaneSolver::run_ac(LaneAnalysis<std::complex<double>>& lanes,
                                            unsigned char* ok) {
  run(lanes, ok);
}

void LaneSolver::solve(std::size_t a, unsigned char* ok) {
  const auto& which = analyses_[a];
  if (which.first) {
    run_ac(ac_[which.second], ok);
  } else {
    run_dc(dc_[which.second], ok);
  }
}

const double* LaneSolver::dc(std::size_t a, std::size_t e, std::size_t i) const {
  const auto& lanes = dc_[analyses_[a].second];
  return &lanes.y[(lanes.pattern->lu.step_of_col(i) * lanes.excitations + e) * L];
}

const std::complex<double>* LaneSolver::ac(std::size_t a, std::size_t e, std::size_t i) const {
  const auto& lanes = ac_[analyses_[a].second];
  return &lanes.y[(lanes.pattern->lu.step_of_col(i) * lanes.excitations + e) * L];
}

}  // namespace lotwise::detail
