#pragma once
// Private: factors and solves a handful of parameter vectors at once on the patterns a
// workspace has prepared. The vectors sit side by side as lanes, so every step of the
// fill, the elimination and the triangular solves reads its index lists once for all of
// them and runs as a short loop over the lanes that the compiler vectorises. Each lane
// does exactly the arithmetic of Network::factor_dc / solve_dc (or the AC pair) on the
// same pattern, so its results are bit-identical to a one-at-a-time evaluation.
#include <complex>
#include <cstddef>
#include <cstdint>
#include <utility>
#include <vector>

#include "lotwise/network.hpp"
#include "mna/lane_count.hpp"
#include "mna/lane_schedule.hpp"
#include "mna/layout.hpp"

namespace lotwise::detail {

/// One operation of a right-hand side, replayed per lane in the order fill_rhs adds.
struct RhsOp {
  enum Kind : unsigned char { add_parameter, add_constant, set_constant } kind;
  std::uint32_t offset;     ///< of the row's lanes in LaneAnalysis::y
  std::uint32_t parameter;  ///< add_parameter
  double value;             ///< the sign (add_parameter), else the constant
};

template <typename T>
struct LaneAnalysis {
  const Pattern<T>* pattern = nullptr;
  LaneSchedule<T> schedule;
  double frequency = 0.0;
  std::size_t excitations = 0;
  std::vector<RhsOp> rhs;                ///< every excitation's operations, in order
  /// The parameters whose reciprocals the fill reads (`reciprocal` below, in this order).
  std::vector<std::size_t> inverted;
  /// The fill's terms on the slots that change between loads (every term of such a
  /// slot), grouped by slot, each slot's in the fill's order so that its sum rounds as in
  /// the one-at-a-time fill; reciprocal terms index `reciprocal`. Every slot the schedule
  /// refills has an entry (the others are part of its constants): each is summed in
  /// registers from its start value and stored once.
  std::vector<SlotFill> slot_fills;
  std::vector<SlotTerm> slot_terms;
  std::vector<T> values;                 ///< nonzeros x lanes
  /// The largest |value|^2 of the slots no term adds to: the matrix's largest entry
  /// (for the singularity test) is the larger of this and the filled slots' maximum.
  double constant_scale2 = 0.0;
  std::vector<T> inverse;                ///< pivot inverses, size x lanes
  std::vector<double> reciprocal;        ///< the terms' reciprocals, x lanes
  std::vector<std::uint32_t> rows;       ///< steps whose right-hand sides the solve reads
  std::vector<T> y;  ///< right-hand sides, then solutions: [step][excitation][lane]
};

class LaneSolver {
 public:
  static constexpr std::size_t L = solve_lanes;

  /// `changing` lists the parameters that may differ from `nominal` between loads; the
  /// others keep their nominal values, which are checked here once. usable() is false
  /// when they fail the check (every vector then goes the one-at-a-time way).
  LaneSolver(const Network& network, const std::vector<double>& nominal,
             const std::vector<std::size_t>& changing);

  bool usable() const { return usable_; }

  /// Adds the next analysis: a DC one with `held` op-amp outputs, or an AC one at
  /// `frequency`, each solved for `excitations`, of which the unknowns `read` will be
  /// read. Needs the pattern prepared in `ws` (Network::prepare_dc / prepare_ac);
  /// without one the solver becomes unusable. `ws` must outlive the solver and not be
  /// prepared again.
  void add_analysis(NetworkWorkspace& ws, double frequency, const std::vector<std::size_t>& held,
                    const std::vector<Excitation>& excitations,
                    const std::vector<std::size_t>& read);

  /// Takes the changing parameters of `count` (1..L) vectors; lanes past `count` repeat
  /// the first.
  void load(const double* const* thetas, std::size_t count);

  /// ok[l] = 1 where lane l's values pass Network::check_values, else 0.
  void check(unsigned char* ok) const;

  /// Fills, factors and solves analysis `a` in every lane; clears ok[l] where a reused
  /// pivot is poor for lane l (that lane must be evaluated one at a time).
  void solve(std::size_t a, unsigned char* ok);

  /// After solve(a): the L lanes of unknown `i` (one of the analysis' `read`) of
  /// excitation `e`.
  const double* dc(std::size_t a, std::size_t e, std::size_t i) const;
  const std::complex<double>* ac(std::size_t a, std::size_t e, std::size_t i) const;

 private:
  template <typename T>
  void compile_rhs(LaneAnalysis<T>& lanes, const std::vector<Excitation>& excitations,
                   const unsigned char* held_row) const;
  template <typename T>
  void run(LaneAnalysis<T>& lanes, unsigned char* ok);
  void run_dc(LaneAnalysis<double>& lanes, unsigned char* ok);
  void run_ac(LaneAnalysis<std::complex<double>>& lanes, unsigned char* ok);
  // load() and check(), compiled per processor (called only from this class's file).
  void load_lanes(const double* const* thetas, std::size_t count);
  void check_lanes(unsigned char* ok) const;

  const Network::Layout& layout_;
  bool usable_ = true;
  std::vector<std::size_t> changing_;
  std::vector<double> nominal_;          ///< every parameter
  std::vector<unsigned char> positive_;  ///< per changing parameter
  std::vector<const OpAmpOutput*> limits_;  ///< op-amps whose output limits can change
  std::vector<double> theta_;            ///< parameters x lanes
  std::vector<std::pair<bool, std::size_t>> analyses_;  ///< (AC, index into dc_ or ac_)
  std::vector<LaneAnalysis<double>> dc_;
  std::vector<LaneAnalysis<std::complex<double>>> ac_;
};

}  // namespace lotwise::detail
