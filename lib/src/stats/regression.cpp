#include "stats/regression.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <numeric>

#include <Eigen/Dense>

namespace lotwise::detail {
namespace {

double pearson(const std::vector<double>& a, const std::vector<double>& b) {
  const std::size_t n = a.size();
  double ma = 0.0, mb = 0.0;
  for (std::size_t i = 0; i < n; ++i) {
    ma += a[i];
    mb += b[i];
  }
  ma /= static_cast<double>(n);
  mb /= static_cast<double>(n);
  double saa = 0.0, sbb = 0.0, sab = 0.0;
  for (std::size_t i = 0; i < n; ++i) {
    saa += (a[i] - ma) * (a[i] - ma);
    sbb += (b[i] - mb) * (b[i] - mb);
    sab += (a[i] - ma) * (b[i] - mb);
  }
  if (!(saa > 0.0) || !(sbb > 0.0)) return std::numeric_limits<double>::quiet_NaN();
  return sab / std::sqrt(saa * sbb);
}

}  // namespace

std::vector<double> average_ranks(const std::vector<double>& values) {
  const std::size_t n = values.size();
  std::vector<std::size_t> order(n);
  std::iota(order.begin(), order.end(), std::size_t{0});
  std::stable_sort(order.begin(), order.end(),
                   [&](std::size_t a, std::size_t b) { return values[a] < values[b]; });
  std::vector<double> ranks(n);
  for (std::size_t i = 0; i < n;) {
    std::size_t j = i + 1;
    while (j < n && values[order[j]] == values[order[i]]) ++j;
    const double rank = 0.5 * static_cast<double>(i + 1 + j);  // mean of ranks i+1 .. j
    for (std::size_t k = i; k < j; ++k) ranks[order[k]] = rank;
    i = j;
  }
  return ranks;
}

RegressionSummary regress(const double* data, std::size_t rows, std::size_t stride,
                          std::size_t x_count, std::size_t y_column) {
  const double nan = std::numeric_limits<double>::quiet_NaN();
  RegressionSummary out;
  out.standardized.assign(x_count, nan);
  out.rank_correlation.assign(x_count, nan);
  out.r_squared = nan;

  std::vector<std::size_t> usable;
  for (std::size_t i = 0; i < rows; ++i) {
    const double* row = data + i * stride;
    bool ok = std::isfinite(row[y_column]);
    for (std::size_t j = 0; j < x_count && ok; ++j) ok = std::isfinite(row[j]);
    if (ok) usable.push_back(i);
  }
  const std::size_t n = usable.size();
  out.rows = n;
  if (n < x_count + 2) return out;

  // Centred columns; parameters without spread are left out of the fit.
  Eigen::VectorXd y(static_cast<Eigen::Index>(n));
  for (std::size_t i = 0; i < n; ++i) y(static_cast<Eigen::Index>(i)) = data[usable[i] * stride + y_column];
  y.array() -= y.mean();
  const double syy = y.squaredNorm();
  if (!(syy > 0.0)) return out;
  std::vector<std::size_t> active;
  std::vector<double> sd(x_count, 0.0);
  Eigen::MatrixXd x(static_cast<Eigen::Index>(n), static_cast<Eigen::Index>(x_count));
  for (std::size_t j = 0; j < x_count; ++j) {
    for (std::size_t i = 0; i < n; ++i) {
      x(static_cast<Eigen::Index>(i), static_cast<Eigen::Index>(j)) = data[usable[i] * stride + j];
    }
    auto column = x.col(static_cast<Eigen::Index>(j));
    column.array() -= column.mean();
    const double s = column.squaredNorm();
    if (s > 0.0) {
      active.push_back(j);
      sd[j] = std::sqrt(s);  // common factor 1/sqrt(n - 1) cancels in the ratios below
    }
  }
  if (!active.empty()) {
    Eigen::MatrixXd a(static_cast<Eigen::Index>(n), static_cast<Eigen::Index>(active.size()));
    for (std::size_t k = 0; k < active.size(); ++k) {
      a.col(static_cast<Eigen::Index>(k)) = x.col(static_cast<Eigen::Index>(active[k]));
    }
    // Column-pivoting QR: stable when parameters are strongly correlated.
    const Eigen::ColPivHouseholderQR<Eigen::MatrixXd> qr(a);
    if (qr.rank() == static_cast<Eigen::Index>(active.size())) {
      const Eigen::VectorXd b = qr.solve(y);
      const double sy = std::sqrt(syy);
      for (std::size_t k = 0; k < active.size(); ++k) {
        out.standardized[active[k]] = b(static_cast<Eigen::Index>(k)) * sd[active[k]] / sy;
      }
      const double residual = (y - a * b).squaredNorm();
      out.r_squared = 1.0 - residual / syy;
    }
  }

  // Spearman: Pearson correlation of the ranks.
  std::vector<double> column(n);
  for (std::size_t i = 0; i < n; ++i) column[i] = data[usable[i] * stride + y_column];
  const std::vector<double> y_ranks = average_ranks(column);
  for (std::size_t j = 0; j < x_count; ++j) {
    if (!(sd[j] > 0.0)) continue;
    for (std::size_t i = 0; i < n; ++i) column[i] = data[usable[i] * stride + j];
    out.rank_correlation[j] = pearson(average_ranks(column), y_ranks);
  }
  return out;
}

std::vector<RegressionSummary> regress_all(const double* data, std::size_t rows,
                                           std::size_t stride, std::size_t x_count,
                                           std::size_t y_count) {
  const double nan = std::numeric_limits<double>::quiet_NaN();
  std::vector<RegressionSummary> out(y_count);
  // Rows with every parameter finite; a measurement column that is finite on all of them
  // uses the shared factorisation and ranks.
  bool parameters_finite = true;
  for (std::size_t i = 0; i < rows && parameters_finite; ++i) {
    for (std::size_t j = 0; j < x_count; ++j) parameters_finite = parameters_finite && std::isfinite(data[i * stride + j]);
  }
  std::vector<bool> shared(y_count, false);
  for (std::size_t k = 0; k < y_count; ++k) {
    bool all = parameters_finite && rows >= x_count + 2;
    for (std::size_t i = 0; i < rows && all; ++i) all = std::isfinite(data[i * stride + x_count + k]);
    shared[k] = all;
    if (!all) out[k] = regress(data, rows, stride, x_count, x_count + k);
  }
  if (std::find(shared.begin(), shared.end(), true) == shared.end()) return out;

  const auto n = static_cast<Eigen::Index>(rows);
  Eigen::MatrixXd x(n, static_cast<Eigen::Index>(x_count));
  std::vector<std::size_t> active;
  std::vector<double> sd(x_count, 0.0);
  std::vector<std::vector<double>> x_ranks(x_count);
  std::vector<double> column(rows);
  for (std::size_t j = 0; j < x_count; ++j) {
    for (std::size_t i = 0; i < rows; ++i) column[i] = data[i * stride + j];
    for (std::size_t i = 0; i < rows; ++i) x(static_cast<Eigen::Index>(i), static_cast<Eigen::Index>(j)) = column[i];
    auto c = x.col(static_cast<Eigen::Index>(j));
    c.array() -= c.mean();
    const double s = c.squaredNorm();
    if (s > 0.0) {
      active.push_back(j);
      sd[j] = std::sqrt(s);
      x_ranks[j] = average_ranks(column);
    }
  }
  Eigen::MatrixXd a(n, static_cast<Eigen::Index>(active.size()));
  for (std::size_t k = 0; k < active.size(); ++k) {
    a.col(static_cast<Eigen::Index>(k)) = x.col(static_cast<Eigen::Index>(active[k]));
  }
  const Eigen::ColPivHouseholderQR<Eigen::MatrixXd> qr(a);
  const bool full_rank = qr.rank() == static_cast<Eigen::Index>(active.size());
  for (std::size_t k = 0; k < y_count; ++k) {
    if (!shared[k]) continue;
    RegressionSummary& r = out[k];
    r.standardized.assign(x_count, nan);
    r.rank_correlation.assign(x_count, nan);
    r.r_squared = nan;
    r.rows = rows;
    for (std::size_t i = 0; i < rows; ++i) column[i] = data[i * stride + x_count + k];
    Eigen::VectorXd y = Eigen::Map<const Eigen::VectorXd>(column.data(), n);
    y.array() -= y.mean();
    const double syy = y.squaredNorm();
    if (!(syy > 0.0)) continue;
    if (full_rank && !active.empty()) {
      const Eigen::VectorXd b = qr.solve(y);
      const double sy = std::sqrt(syy);
      for (std::size_t j = 0; j < active.size(); ++j) {
        r.standardized[active[j]] = b(static_cast<Eigen::Index>(j)) * sd[active[j]] / sy;
      }
      r.r_squared = 1.0 - (y - a * b).squaredNorm() / syy;
    }
    const std::vector<double> y_ranks = average_ranks(column);
    for (std::size_t j : active) r.rank_correlation[j] = pearson(x_ranks[j], y_ranks);
  }
  return out;
}

}  // namespace lotwise::detail
