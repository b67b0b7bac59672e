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
  nominal_ = nominal;
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
  // Rows the solve never reads are left out.
  for (std::size_t e = 0; e < count; ++e) {
    auto at = [&](std::size_t row) {
      return static_cast<std::uint32_t>((lu.step_of_row(row) * count + e) * L);
    };
    auto read = [&](std::size_t row) { return lanes.schedule.reads_step(lu.step_of_row(row)); };
    visit_rhs(
        layout_, excitations[e], held_row,
        [&](std::size_t row, std::size_t p, double sign) {
          if (!read(row)) return;
          lanes.rhs.push_back(
              RhsOp{RhsOp::add_parameter, at(row), static_cast<std::uint32_t>(p), sign});
        },
        [&](std::size_t row, double value) {
          if (read(row)) lanes.rhs.push_back(RhsOp{RhsOp::add_constant, at(row), 0, value});
        },
        [&](std::size_t row, double level) {
          if (read(row)) lanes.rhs.push_back(RhsOp{RhsOp::set_constant, at(row), 0, level});
        });
  }
}

void LaneSolver::add_analysis(NetworkWorkspace& ws, double frequency,
                              const std::vector<std::size_t>& held,
                              const std::vector<Excitation>& excitations,
                              const std::vector<std::size_t>& read) {
  auto& d = ws.data();
  const std::size_t n = layout_.size;
  auto shape = [&](auto& lanes) {
    using T = typename std::decay_t<decltype(lanes.values)>::value_type;
    const auto& lu = lanes.pattern->lu;
    const auto& fill = lanes.pattern->fill;
    lanes.frequency = frequency;
    lanes.excitations = excitations.size();
    // A slot changes between loads when a term on a changing parameter adds to it.
    std::vector<unsigned char> varies(lu.nonzeros(), 0);
    auto mark = [&](const std::vector<FillTerm>& terms, bool reciprocal) {
      for (const auto& t : terms) {
        if (contains(changing_, reciprocal ? fill.inverse[t.index] : t.index)) varies[t.slot] = 1;
      }
    };
    mark(fill.real_reciprocal, true);
    mark(fill.real_value, false);
    mark(fill.imag_value, false);
    mark(fill.imag_reciprocal, true);
    // Every term of a changing slot is added per load, in the fill's order (so the sums
    // round as in the one-at-a-time fill); the other slots start filled at nominal.
    std::vector<T> start(lu.nonzeros());
    std::vector<double> r(fill.inverse.size());
    fill_values(fill, nominal_.data(), frequency, start.data(), r.data());
    std::vector<std::uint32_t> index_of(fill.inverse.size(), 0);
    std::vector<unsigned char> indexed(fill.inverse.size(), 0);
    // The terms of the changing slots, grouped by slot in the fill's order.
    std::vector<std::vector<SlotTerm>> by_slot(lu.nonzeros());
    auto keep = [&](const std::vector<FillTerm>& from, SlotTerm::Kind kind) {
      const bool reciprocal = reads_reciprocal(kind);
      for (FillTerm t : from) {
        if (!varies[t.slot]) continue;
        if (reciprocal) {
          if (!indexed[t.index]) {
            indexed[t.index] = 1;
            index_of[t.index] = static_cast<std::uint32_t>(lanes.inverted.size());
            lanes.inverted.push_back(fill.inverse[t.index]);
          }
          t.index = index_of[t.index];
        }
        by_slot[t.slot].push_back(SlotTerm{kind, t.index, t.factor});
      }
    };
    keep(fill.real_reciprocal, SlotTerm::real_reciprocal);
    keep(fill.real_value, SlotTerm::real_value);
    keep(fill.imag_value, SlotTerm::imag_value);
    keep(fill.imag_reciprocal, SlotTerm::imag_reciprocal);
    for (std::size_t s = 0; s < lu.nonzeros(); ++s) {
      if (varies[s]) {
        start[s] = fill.constants[s];
      } else {
        lanes.constant_scale2 = std::max(lanes.constant_scale2, magnitude2(start[s]));
      }
    }
    lanes.schedule = LaneSchedule<T>(lu, start, varies, read);
    if (!lanes.schedule.usable()) usable_ = false;
    for (const std::uint32_t slot : lanes.schedule.refill()) {
      const auto begin = static_cast<std::uint32_t>(lanes.slot_terms.size());
      lanes.slot_terms.insert(lanes.slot_terms.end(), by_slot[slot].begin(), by_slot[slot].end());
      lanes.slot_fills.push_back(
          SlotFill{slot, begin, static_cast<std::uint32_t>(lanes.slot_terms.size())});
    }
    const auto& initial = lanes.schedule.initial();
    lanes.values.resize(lu.nonzeros() * L);
    for (std::size_t s = 0; s < lu.nonzeros(); ++s) lanes_set<L>(&lanes.values[s * L], initial[s]);
    const auto& inverse = lanes.schedule.initial_inverse();
    lanes.inverse.resize(n * L);
    for (std::size_t k = 0; k < n; ++k) lanes_set<L>(&lanes.inverse[k * L], inverse[k]);
    lanes.reciprocal.resize(lanes.inverted.size() * L);
    for (std::size_t k = 0; k < n; ++k) {
      if (lanes.schedule.reads_step(k)) lanes.rows.push_back(static_cast<std::uint32_t>(k));
    }
    lanes.y.assign(excitations.size() * n * L, T(0));
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

// The public entry points are plain functions calling clones of this file: GCC's
// link-time optimisation reports a function compiled per processor (target_clones) and
// called from another file as breaking the one-definition rule.
void LaneSolver::load(const double* const* thetas, std::size_t count) { load_lanes(thetas, count); }

void LaneSolver::check(unsigned char* ok) const { check_lanes(ok); }

LOTWISE_AVX2_CLONES void LaneSolver::load_lanes(const double* const* thetas, std::size_t count) {
  const double* from[L];
  for (std::size_t l = 0; l < L; ++l) from[l] = thetas[l < count ? l : 0];
  for (const std::size_t p : changing_) {
    double* lanes = &theta_[p * L];
    for (std::size_t l = 0; l < L; ++l) lanes[l] = from[l][p];
  }
}

LOTWISE_AVX2_CLONES void LaneSolver::check_lanes(unsigned char* ok) const {
  // In range: finite, and above 0 where only positive values are physical; as masks,
  // without branches (a NaN fails both comparisons).
  constexpr double inf = std::numeric_limits<double>::infinity();
  std::int64_t good[L];
  lanes_set<L>(good, std::int64_t(-1));
  for (std::size_t k = 0; k < changing_.size(); ++k) {
    lanes_check_range<L>(good, &theta_[changing_[k] * L], positive_[k] != 0 ? 0.0 : -inf);
  }
  for (std::size_t l = 0; l < L; ++l) ok[l] = good[l] != 0 ? 1 : 0;
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
  // The fill of Network's factor_pattern, per lane, on the slots that change.
  const auto& schedule = lanes.schedule;
  T* v = lanes.values.data();
  const T* initial = schedule.initial().data();
  double* r = lanes.reciprocal.data();
  for (std::size_t k = 0; k < lanes.inverted.size(); ++k) {
    lanes_reciprocal<L>(r + k * L, &theta_[lanes.inverted[k] * L]);
  }
  // The dense path's singularity scale, n eps max |a_ij|, per lane. The maximum is exact
  // and NaN never enters it, so the constants' part taken once and the changing slots'
  // as they are summed give the same value as a pass over every entry.
  double scale2[L];
  for (std::size_t l = 0; l < L; ++l) scale2[l] = lanes.constant_scale2;
  lanes_fill_slots<L>(lanes.slot_fills.data(), lanes.slot_fills.size(), lanes.slot_terms.data(),
                      initial, r, theta_.data(), lanes.frequency, v, scale2);
  const auto& lu = lanes.pattern->lu;
  const double n_eps = static_cast<double>(lu.size()) * std::numeric_limits<double>::epsilon();
  double tiny[L];
  for (std::size_t l = 0; l < L; ++l) tiny[l] = n_eps * std::sqrt(scale2[l]);
  schedule.template factor<L>(v, lanes.inverse.data(), tiny, ok);

  // The right-hand sides the solve reads, in step order, then one pass of triangular
  // solves for all. The last solve left its solutions in y: clear those rows first (a
  // loop of vector stores; a call to memset costs more at this size).
  T* y = lanes.y.data();
  const std::size_t width = lanes.excitations * L;
  for (const std::uint32_t k : lanes.rows) {
    for (std::size_t i = 0; i < width; i += L) lanes_set<L>(y + k * width + i, T(0));
  }
  for (const RhsOp& op : lanes.rhs) {
    T* row = y + op.offset;
    switch (op.kind) {
      case RhsOp::add_parameter:
        lanes_add_scaled<L>(row, op.value, theta_.data() + static_cast<std::size_t>(op.parameter) * L);
        break;
      case RhsOp::add_constant: lanes_add<L>(row, op.value); break;
      case RhsOp::set_constant: lanes_set<L>(row, T(op.value)); break;
    }
  }
  schedule.template solve<L>(v, lanes.inverse.data(), y, lanes.excitations);
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
