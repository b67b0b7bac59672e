#pragma once
// Private: PatternLU's factorisation and triangular solves narrowed to one use of the
// lane solver. Most entries of a circuit matrix never change between builds (source
// rows, constant stamps, stamps of parameters that are not varied) and neither does
// anything the elimination computes from them alone: those entries, their multipliers and
// pivot inverses are computed once, here, by the same operations in the same order as
// PatternLU::factor(). Per matrix, only the entries that can change are refilled and
// eliminated, only the pivots that can change are inverted, only the steps that see a
// changing value are checked lane by lane, and the solves visit only the steps that lead
// to the unknowns the caller reads. Everything computed per lane is computed exactly as
// factor() and solve() would, so the results stay bit-identical.
#include <algorithm>
#include <cstddef>
#include <cstdint>
#include <limits>
#include <vector>

#include "mna/lane_ops.hpp"
#include "mna/sparse_lu.hpp"

namespace lotwise::detail {

template <typename T>
class LaneSchedule {
 public:
  using Index = std::uint32_t;

  LaneSchedule() = default;

  /// For matrices of `lu`'s pattern whose slot s starts each factorisation at `start[s]`
  /// plus, where `varies[s]`, terms that change from one matrix to the next; `read` lists
  /// the unknowns the caller reads after solve().
  LaneSchedule(const PatternLU<T>& lu, const std::vector<T>& start,
               const std::vector<unsigned char>& varies, const std::vector<std::size_t>& read) {
    const std::size_t n = lu.size();
    const double u2 = pivot_check_threshold * pivot_check_threshold;
    constexpr double inf = std::numeric_limits<double>::infinity();
    // The elimination replayed on the constant values only; `changing` marks a slot once
    // it holds a value that depends on the matrix. A slot's refill value is what it
    // holds when it starts to change (or its final value if it never does).
    std::vector<T> value = start;
    std::vector<unsigned char> changing(varies);
    initial_ = start;  // the slots that change from the start refill from `start`
    auto start_changing = [&](Index s) {
      if (changing[s]) return;
      changing[s] = 1;
      initial_[s] = value[s];
    };
    initial_inverse_.assign(n, T(0));
    for (std::size_t k = 0; k < n; ++k) {
      const Index pivot = lu.pivot_[k];
      const Index lb = lu.lower_begin_[k], le = lu.lower_begin_[k + 1];
      const Index ub = lu.upper_begin_[k], width = lu.upper_begin_[k + 1] - ub;
      Step step{static_cast<Index>(k), pivot, changing[pivot] != 0, false, 0.0,
                static_cast<Index>(check_slot_.size()), 0,
                static_cast<Index>(lower_.size()), 0};
      const double p2 = magnitude2(value[pivot]);
      for (Index t = lb; t < le; ++t) {
        const Index s = lu.lower_slot_[t];
        if (changing[s]) {
          check_slot_.push_back(s);
        } else {
          step.constant_col2 = std::max(step.constant_col2, magnitude2(value[s]));
        }
      }
      step.check_end = static_cast<Index>(check_slot_.size());
      step.check = step.invert || step.check_end > step.check_begin;
      if (!step.check) {
        // The same for every matrix but for the singularity scale: checked here, the
        // scale part once per lane against the smallest such pivot.
        if (!(p2 >= u2 * step.constant_col2) || !(p2 < inf)) usable_ = false;
        constant_pivot_min2_ = std::min(constant_pivot_min2_, p2);
        has_constant_pivots_ = true;
      }
      if (!step.invert) initial_inverse_[k] = T(1) / value[pivot];
      const Index* target = lu.update_.data() + lu.update_begin_[k];
      for (Index t = lb; t < le; ++t, target += width) {
        const Index s = lu.lower_slot_[t];
        Lower lower{s, false, static_cast<Index>(update_.size()), 0};
        if (step.invert || changing[s]) {
          lower.scale = true;
          start_changing(s);
        } else {
          value[s] = value[s] * initial_inverse_[k];
        }
        for (Index q = 0; q < width; ++q) {
          const Index u = lu.upper_slot_[ub + q];
          if (lower.scale || changing[u] || changing[target[q]]) {
            start_changing(target[q]);
            update_.push_back(Update{target[q], u});
          } else {
            value[target[q]] -= value[s] * value[u];
          }
        }
        lower.update_end = static_cast<Index>(update_.size());
        if (lower.scale || lower.update_end > lower.update_begin) lower_.push_back(lower);
      }
      step.lower_end = static_cast<Index>(lower_.size());
      if (step.check || step.lower_end > step.lower_begin) steps_.push_back(step);
    }
    for (std::size_t s = 0; s < value.size(); ++s) {
      if (changing[s]) {
        refill_.push_back(static_cast<Index>(s));
      } else {
        initial_[s] = value[s];
      }
    }
    compile_solves(lu, read);
  }

  /// False when a pivot that never changes fails its check (so every matrix would).
  bool usable() const { return usable_; }
  /// Every slot's value to start from: final for the slots that never change, the
  /// refill value for the others.
  const std::vector<T>& initial() const { return initial_; }
  /// Per step: the inverse of a pivot that never changes (0 for the others).
  const std::vector<T>& initial_inverse() const { return initial_inverse_; }
  /// The slots to set back to initial() before each factor(); the changing terms are
  /// then added to them.
  const std::vector<Index>& refill() const { return refill_; }
  /// Whether solve() reads the right-hand side at elimination step k.
  bool reads_step(std::size_t k) const { return forward_needed_[k] != 0; }

  /// PatternLU::factor()'s work for L matrices side by side, on `v` (nonzeros x L,
  /// lane-adjacent) set up from initial(), refill() and the changing terms, and
  /// `inverse` (size x L) holding initial_inverse(). A lane whose check fails gets
  /// ok[l] = 0 (its values are then spoiled) while the others go on.
  template <std::size_t L>
  void factor(T* v, T* inverse, const double* tiny, unsigned char* ok) const {
    const double u2 = pivot_check_threshold * pivot_check_threshold;
    // The checks as all-ones / zero masks, combined without branches (vectorised); a
    // NaN anywhere fails, as in factor().
    std::int64_t good[L];
    double tiny2[L];
    for (std::size_t l = 0; l < L; ++l) {
      good[l] = ok[l] ? -1 : 0;
      tiny2[l] = tiny[l] * tiny[l];
    }
    if (has_constant_pivots_) {
      for (std::size_t l = 0; l < L; ++l) {
        good[l] &= -static_cast<std::int64_t>(constant_pivot_min2_ > tiny2[l]);
      }
    }
    for (const Step& step : steps_) {
      const T* p = v + static_cast<std::size_t>(step.pivot) * L;
      if (step.check) {
        double col2[L];
        for (std::size_t l = 0; l < L; ++l) col2[l] = step.constant_col2;
        for (Index t = step.check_begin; t < step.check_end; ++t) {
          lanes_max_magnitude2<L>(col2, v + static_cast<std::size_t>(check_slot_[t]) * L);
        }
        lanes_check_pivot<L>(good, p, tiny2, col2, u2);
      }
      T* inv = inverse + static_cast<std::size_t>(step.step) * L;
      if (step.invert) lanes_reciprocal<L>(inv, p);
      for (Index e = step.lower_begin; e < step.lower_end; ++e) {
        const Lower& lower = lower_[e];
        T* m = v + static_cast<std::size_t>(lower.slot) * L;
        if (lower.scale) lanes_scale<L>(m, inv);
        for (Index q = lower.update_begin; q < lower.update_end; ++q) {
          lanes_sub_product<L>(v + static_cast<std::size_t>(update_[q].target) * L, m,
                               v + static_cast<std::size_t>(update_[q].upper) * L);
        }
      }
    }
    for (std::size_t l = 0; l < L; ++l) ok[l] = good[l] != 0 ? 1 : 0;
  }

  /// PatternLU::solve_block's work for L factorisations side by side, in place: `y`
  /// holds `count` right-hand sides in step order, [step][column][lane] (row r of column
  /// c at (step_of_row(r) * count + c) * L), and receives the solutions in the same
  /// order (unknown i at (step_of_col(i) * count + c) * L). Only the unknowns in `read`
  /// are solved for; only the steps reads_step() names are read.
  template <std::size_t L>
  void solve(const T* v, const T* inverse, T* y, std::size_t count) const {
    const std::size_t w = count * L;  // one step's values: count columns of L lanes
    for (const Entry& e : forward_) {
      const T* f = v + static_cast<std::size_t>(e.slot) * L;
      const T* yk = y + e.from * w;
      T* ym = y + e.to * w;
      for (std::size_t c = 0; c < count; ++c) lanes_sub_product<L>(ym + c * L, f, yk + c * L);
    }
    for (const BackStep& b : backward_) {
      T* yk = y + b.step * w;
      for (Index t = b.begin; t < b.end; ++t) {
        const Entry& e = upper_[t];
        const T* f = v + static_cast<std::size_t>(e.slot) * L;
        const T* ym = y + e.from * w;
        for (std::size_t c = 0; c < count; ++c) lanes_sub_product<L>(yk + c * L, f, ym + c * L);
      }
      const T* inv = inverse + b.step * L;
      for (std::size_t c = 0; c < count; ++c) lanes_scale<L>(yk + c * L, inv);
    }
  }

 private:
  struct Step {
    Index step;
    Index pivot;          ///< slot
    bool invert;          ///< the pivot changes: invert it per lane
    bool check;           ///< the pivot or a column entry changes: check per lane
    double constant_col2; ///< largest |entry|^2 of the column's unchanging entries
    Index check_begin, check_end;  ///< the column's changing entries, in check_slot_
    Index lower_begin, lower_end;  ///< in lower_
  };
  struct Lower {
    Index slot;
    bool scale;  ///< the multiplier changes: divide it by the pivot per lane
    Index update_begin, update_end;  ///< in update_
  };
  struct Update {
    Index target;
    Index upper;
  };
  struct Entry {  ///< a solve's y[to] -= v[slot] * y[from]
    Index slot;
    Index from;
    Index to;
  };
  struct BackStep {
    std::size_t step;
    Index begin, end;  ///< in upper_
  };

  void compile_solves(const PatternLU<T>& lu, const std::vector<std::size_t>& read) {
    const std::size_t n = lu.size();
    // Back substitution: a step is needed when its unknown is read or a needed step's
    // row reads it. Forward: a right-hand side is needed when a needed one depends on it.
    std::vector<unsigned char> needed(n, 0);
    for (const std::size_t i : read) needed[lu.step_of_col(i)] = 1;
    for (std::size_t k = 0; k < n; ++k) {
      if (!needed[k]) continue;
      for (Index t = lu.upper_begin_[k]; t < lu.upper_begin_[k + 1]; ++t) needed[lu.upper_step_[t]] = 1;
    }
    forward_needed_ = needed;
    for (std::size_t k = n; k-- > 0;) {
      for (Index t = lu.lower_begin_[k]; t < lu.lower_begin_[k + 1]; ++t) {
        if (forward_needed_[lu.lower_step_[t]]) forward_needed_[k] = 1;
      }
    }
    for (std::size_t k = 0; k < n; ++k) {
      for (Index t = lu.lower_begin_[k]; t < lu.lower_begin_[k + 1]; ++t) {
        if (forward_needed_[lu.lower_step_[t]]) {
          forward_.push_back(Entry{lu.lower_slot_[t], static_cast<Index>(k), lu.lower_step_[t]});
        }
      }
    }
    for (std::size_t k = n; k-- > 0;) {
      if (!needed[k]) continue;
      BackStep b{k, static_cast<Index>(upper_.size()), 0};
      for (Index t = lu.upper_begin_[k]; t < lu.upper_begin_[k + 1]; ++t) {
        upper_.push_back(Entry{lu.upper_slot_[t], lu.upper_step_[t], static_cast<Index>(k)});
      }
      b.end = static_cast<Index>(upper_.size());
      backward_.push_back(b);
    }
  }

  bool usable_ = true;
  bool has_constant_pivots_ = false;
  double constant_pivot_min2_ = std::numeric_limits<double>::infinity();
  std::vector<T> initial_, initial_inverse_;
  std::vector<Index> refill_;
  std::vector<Step> steps_;
  std::vector<Index> check_slot_;
  std::vector<Lower> lower_;
  std::vector<Update> update_;
  std::vector<Entry> forward_, upper_;
  std::vector<BackStep> backward_;
  std::vector<unsigned char> forward_needed_;
};

}  // namespace lotwise::detail
