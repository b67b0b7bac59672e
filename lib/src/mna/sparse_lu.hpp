#pragma once
// Private: an LU factorisation that reuses one pivot order and fill pattern for every
// matrix with the same structure. The pivot order is chosen once, on a representative
// (nominal) matrix, by threshold Markowitz pivoting; the elimination then becomes a flat
// schedule of slot indices into a compact value array. Each new matrix refills the
// values and replays the schedule: no search, no allocation, no branches on structure.
// Every pivot is re-checked against its column; a poor or tiny one makes factor() fail,
// and the caller falls back to a dense partial-pivoting factorisation.
#include <algorithm>
#include <cmath>
#include <complex>
#include <cstddef>
#include <cstdint>
#include <limits>
#include <utility>
#include <vector>

#include "mna/lane_ops.hpp"


namespace lotwise::detail {

/// Threshold for the choice of pivots on the nominal matrix: a candidate must be at
/// least this fraction of the largest entry in its column (common practice: 0.1).
constexpr double pivot_choice_threshold = 0.1;
/// Threshold for accepting a reused pivot on a new matrix. Looser than the choice so that
/// ordinary tolerance spreads never trigger the fallback; it still bounds every
/// multiplier by 1 / 0.01 (common practice for threshold partial pivoting: 0.01 to 0.1).
constexpr double pivot_check_threshold = 0.01;

/// Outcome of one numeric factorisation.
enum class PatternStatus { ok, poor_pivot };

template <typename T>
class LaneSchedule;

template <typename T>
class PatternLU {
 public:
  using Index = std::uint32_t;

  PatternLU() = default;

  /// Chooses the pivot order and fill for an n x n matrix whose possible non-zeros are
  /// `positions` (row, col; repeats allowed), from the values `nominal` (row-major n x n).
  /// Returns false (and stays unusable) if no acceptable pivot order exists for them,
  /// e.g. a singular nominal matrix.
  bool analyse(std::size_t n, const std::vector<std::pair<std::size_t, std::size_t>>& positions,
               const std::vector<T>& nominal) {
    *this = PatternLU();
    n_ = n;
    std::vector<unsigned char> s(n * n, 0);
    for (const auto& p : positions) s[p.first * n + p.second] = 1;
    std::vector<T> m = nominal;
    std::vector<unsigned char> row_done(n, 0), col_done(n, 0);
    std::vector<std::size_t> row_count(n), col_count(n);
    std::vector<double> col_max(n);
    row_of_step_.resize(n);
    col_of_step_.resize(n);
    for (std::size_t k = 0; k < n; ++k) {
      std::fill(row_count.begin(), row_count.end(), 0);
      std::fill(col_count.begin(), col_count.end(), 0);
      std::fill(col_max.begin(), col_max.end(), 0.0);
      for (std::size_t i = 0; i < n; ++i) {
        if (row_done[i]) continue;
        for (std::size_t j = 0; j < n; ++j) {
          if (col_done[j] || !s[i * n + j]) continue;
          ++row_count[i];
          ++col_count[j];
          col_max[j] = std::max(col_max[j], magnitude2(m[i * n + j]));
        }
      }
      // Fewest fill-ins (Markowitz count) among the acceptable pivots; among equals the
      // one largest relative to its column, then the largest.
      std::size_t bi = n, bj = n, best_cost = 0;
      double best_rel = 0.0, best_mag = 0.0;
      const double u2 = pivot_choice_threshold * pivot_choice_threshold;
      for (std::size_t i = 0; i < n; ++i) {
        if (row_done[i]) continue;
        for (std::size_t j = 0; j < n; ++j) {
          if (col_done[j] || !s[i * n + j]) continue;
          const double mag = magnitude2(m[i * n + j]);
          if (!(mag > 0.0) || !std::isfinite(mag) || mag < u2 * col_max[j]) continue;
          const std::size_t cost = (row_count[i] - 1) * (col_count[j] - 1);
          const double rel = mag / col_max[j];
          const bool better = bi == n || cost < best_cost ||
                              (cost == best_cost && (rel > best_rel ||
                                                     (rel == best_rel && mag > best_mag)));
          if (better) {
            bi = i;
            bj = j;
            best_cost = cost;
            best_rel = rel;
            best_mag = mag;
          }
        }
      }
      if (bi == n) {
        *this = PatternLU();
        return false;
      }
      row_of_step_[k] = bi;
      col_of_step_[k] = bj;
      row_done[bi] = 1;
      col_done[bj] = 1;
      // Eliminate on the nominal values and record the fill.
      const T pivot = m[bi * n + bj];
      for (std::size_t i = 0; i < n; ++i) {
        if (row_done[i] || !s[i * n + bj]) continue;
        const T l = m[i * n + bj] / pivot;
        m[i * n + bj] = l;
        for (std::size_t j = 0; j < n; ++j) {
          if (col_done[j] || !s[bi * n + j]) continue;
          m[i * n + j] -= l * m[bi * n + j];
          s[i * n + j] = 1;
        }
      }
    }
    // Slots of the final pattern, in elimination order.
    slot_of_.assign(n * n, npos_slot);
    Index next = 0;
    for (std::size_t i = 0; i < n; ++i) {
      for (std::size_t j = 0; j < n; ++j) {
        if (s[i * n + j]) slot_of_[i * n + j] = next++;
      }
    }
    step_of_row_.assign(n, 0);
    step_of_col_.assign(n, 0);
    for (std::size_t k = 0; k < n; ++k) {
      step_of_row_[row_of_step_[k]] = k;
      step_of_col_[col_of_step_[k]] = k;
    }
    const auto& step_of_row = step_of_row_;
    const auto& step_of_col = step_of_col_;
    pivot_.resize(n);
    lower_begin_.assign(n + 1, 0);
    upper_begin_.assign(n + 1, 0);
    update_begin_.assign(n + 1, 0);
    for (std::size_t k = 0; k < n; ++k) {
      const std::size_t r = row_of_step_[k], c = col_of_step_[k];
      pivot_[k] = slot_of_[r * n + c];
      lower_begin_[k] = static_cast<Index>(lower_slot_.size());
      upper_begin_[k] = static_cast<Index>(upper_slot_.size());
      update_begin_[k] = static_cast<Index>(update_.size());
      std::vector<std::pair<std::size_t, Index>> lower, upper;  // (step, slot)
      for (std::size_t i = 0; i < n; ++i) {
        if (s[i * n + c] && step_of_row[i] > k) {
          lower.emplace_back(step_of_row[i], slot_of_[i * n + c]);
        }
      }
      for (std::size_t j = 0; j < n; ++j) {
        if (s[r * n + j] && step_of_col[j] > k) {
          upper.emplace_back(step_of_col[j], slot_of_[r * n + j]);
        }
      }
      std::sort(lower.begin(), lower.end());
      std::sort(upper.begin(), upper.end());
      for (const auto& l : lower) {
        lower_slot_.push_back(l.second);
        lower_step_.push_back(static_cast<Index>(l.first));
        for (const auto& u : upper) {
          update_.push_back(slot_of_[row_of_step_[l.first] * n + col_of_step_[u.first]]);
        }
      }
      for (const auto& u : upper) {
        upper_slot_.push_back(u.second);
        upper_step_.push_back(static_cast<Index>(u.first));
      }
    }
    lower_begin_[n] = static_cast<Index>(lower_slot_.size());
    upper_begin_[n] = static_cast<Index>(upper_slot_.size());
    update_begin_[n] = static_cast<Index>(update_.size());
    values_.assign(next, T(0));
    inverse_pivot_.assign(n, T(0));
    y_.assign(n, T(0));
    ready_ = true;
    return true;
  }

  bool ready() const { return ready_; }
  std::size_t size() const { return n_; }
  /// Entries of L and U together (the compact value array).
  std::size_t nonzeros() const { return values_.size(); }
  /// Multiply-adds of one factorisation (the update schedule).
  std::size_t updates() const { return update_.size(); }

  /// Slot of entry (row, col) of the original matrix in values(), or npos_slot if it is
  /// outside the pattern (it is then always zero).
  Index slot(std::size_t row, std::size_t col) const { return slot_of_[row * n_ + col]; }
  static constexpr Index npos_slot = static_cast<Index>(-1);

  /// The values to fill before factor(): zero them, then add each entry at its slot.
  T* values() { return values_.data(); }
  const T* values() const { return values_.data(); }
  void clear_values() { std::fill(values_.begin(), values_.end(), T(0)); }

  /// Factors the filled values in place with the fixed pivot order. Fails with
  /// poor_pivot when a pivot is below pivot_check_threshold of its column, at or below
  /// `tiny`, or not finite; the values are then spoiled and must be refilled.
  PatternStatus factor(double tiny) {
    T* v = values_.data();
    const double tiny2 = tiny * tiny;
    const double u2 = pivot_check_threshold * pivot_check_threshold;
    for (std::size_t k = 0; k < n_; ++k) {
      const T p = v[pivot_[k]];
      const double p2 = magnitude2(p);
      double col2 = 0.0;
      const Index lb = lower_begin_[k], le = lower_begin_[k + 1];
      for (Index t = lb; t < le; ++t) col2 = std::max(col2, magnitude2(v[lower_slot_[t]]));
      // Written so that a NaN anywhere fails the test.
      if (!(p2 > tiny2) || !(p2 >= u2 * col2) || !(p2 < std::numeric_limits<double>::infinity())) {
        return PatternStatus::poor_pivot;
      }
      const T inv = T(1) / p;
      inverse_pivot_[k] = inv;
      const Index ub = upper_begin_[k], ue = upper_begin_[k + 1];
      const Index width = ue - ub;
      const Index* target = update_.data() + update_begin_[k];
      for (Index t = lb; t < le; ++t) {
        const T l = v[lower_slot_[t]] * inv;
        v[lower_slot_[t]] = l;
        for (Index q = 0; q < width; ++q) v[target[q]] -= l * v[upper_slot_[ub + q]];
        target += width;
      }
    }
    return PatternStatus::ok;
  }

  /// Elimination step of original row r (its right-hand side's place in LaneSchedule::solve)
  /// and of unknown c (its solution's place).
  std::size_t step_of_row(std::size_t r) const { return step_of_row_[r]; }
  std::size_t step_of_col(std::size_t c) const { return step_of_col_[c]; }

  /// Room for solving `columns` right-hand sides at once (solve_block); allocates.
  void reserve_columns(std::size_t columns) {
    if (y_.size() < n_ * columns) y_.assign(n_ * columns, T(0));
  }

  /// Solves A X = B for `count` columns in one pass over the factors (the index lists
  /// are read once for all of them). B and X are column-major with leading dimensions
  /// ldb and ldx; count must not exceed reserve_columns (or 1).
  template <typename In, typename Out>
  void solve_block(const In* b, std::size_t ldb, Out* x, std::size_t ldx, std::size_t count) {
    // The common counts with the column loop unrolled at compile time.
    switch (count) {
      case 1: solve(b, x); return;
      case 2: solve_columns<2>(b, ldb, x, ldx, 2); return;
      case 3: solve_columns<3>(b, ldb, x, ldx, 3); return;
      case 4: solve_columns<4>(b, ldb, x, ldx, 4); return;
      default: solve_columns<0>(b, ldb, x, ldx, count); return;
    }
  }

  /// Solves A x = b with the last successful factorisation; x and b may not overlap.
  template <typename In, typename Out>
  void solve(const In* b, Out* x) {
    const T* v = values_.data();
    T* y = y_.data();
    for (std::size_t k = 0; k < n_; ++k) y[k] = b[row_of_step_[k]];
    for (std::size_t k = 0; k < n_; ++k) {
      const T yk = y[k];
      for (Index t = lower_begin_[k]; t < lower_begin_[k + 1]; ++t) {
        y[lower_step_[t]] -= v[lower_slot_[t]] * yk;
      }
    }
    for (std::size_t k = n_; k-- > 0;) {
      T sum = y[k];
      for (Index t = upper_begin_[k]; t < upper_begin_[k + 1]; ++t) {
        sum -= v[upper_slot_[t]] * y[upper_step_[t]];
      }
      y[k] = sum * inverse_pivot_[k];
    }
    for (std::size_t k = 0; k < n_; ++k) x[col_of_step_[k]] = y[k];
  }

 private:
  template <typename> friend class LaneSchedule;  // reads the schedule to narrow it

  // C > 0: exactly C columns (unrolled); C == 0: `count` columns.
  template <std::size_t C, typename In, typename Out>
  void solve_columns(const In* b, std::size_t ldb, Out* x, std::size_t ldx, std::size_t count) {
    const std::size_t m = C > 0 ? C : count;
    const T* v = values_.data();
    T* y = y_.data();  // row-major n x m: the columns of one step side by side
    for (std::size_t k = 0; k < n_; ++k) {
      const std::size_t r = row_of_step_[k];
      for (std::size_t c = 0; c < m; ++c) y[k * m + c] = b[c * ldb + r];
    }
    for (std::size_t k = 0; k < n_; ++k) {
      const T* yk = y + k * m;
      const Index le = lower_begin_[k + 1];
      for (Index t = lower_begin_[k]; t < le; ++t) {
        const T l = v[lower_slot_[t]];
        T* ym = y + lower_step_[t] * m;
        for (std::size_t c = 0; c < m; ++c) ym[c] -= l * yk[c];
      }
    }
    for (std::size_t k = n_; k-- > 0;) {
      T* yk = y + k * m;
      const Index ue = upper_begin_[k + 1];
      for (Index t = upper_begin_[k]; t < ue; ++t) {
        const T u = v[upper_slot_[t]];
        const T* ym = y + upper_step_[t] * m;
        for (std::size_t c = 0; c < m; ++c) yk[c] -= u * ym[c];
      }
      const T inv = inverse_pivot_[k];
      for (std::size_t c = 0; c < m; ++c) yk[c] *= inv;
    }
    for (std::size_t k = 0; k < n_; ++k) {
      const std::size_t col = col_of_step_[k];
      for (std::size_t c = 0; c < m; ++c) x[c * ldx + col] = y[k * m + c];
    }
  }

  bool ready_ = false;
  std::size_t n_ = 0;
  std::vector<std::size_t> row_of_step_, col_of_step_;
  std::vector<std::size_t> step_of_row_, step_of_col_;
  std::vector<Index> slot_of_;  ///< n x n, row-major
  std::vector<Index> pivot_;
  std::vector<Index> lower_begin_, lower_slot_, lower_step_;
  std::vector<Index> upper_begin_, upper_slot_, upper_step_;
  std::vector<Index> update_begin_, update_;
  std::vector<T> values_;
  std::vector<T> inverse_pivot_;
  std::vector<T> y_;
};

}  // namespace lotwise::detail
