// The pattern-reusing factorisation (mna/sparse_lu.hpp) against Eigen's dense
// partial-pivoting LU: on random sparse matrices, on random networks with random
// parameter vectors (DC and AC), and the fallback to the dense path when a reused pivot
// becomes poor. Agreement is judged by the backward error ||A x - b|| / (||A|| ||x|| +
// ||b||), which a stable solve keeps near machine epsilon whatever the conditioning
// (Higham, Accuracy and Stability of Numerical Algorithms, 2nd ed., sec. 9.3 / 7.1).
#include <cmath>
#include <complex>
#include <random>
#include <string>
#include <utility>
#include <vector>

#include <Eigen/Dense>

#include "engine_support.hpp"
#include "random_networks.hpp"
#include "mna/layout.hpp"
#include "mna/sparse_lu.hpp"

using namespace lotwise;
using namespace lotwise::testing;

namespace {

template <typename T>
using Matrix = Eigen::Matrix<T, Eigen::Dynamic, Eigen::Dynamic>;
template <typename T>
using Vector = Eigen::Matrix<T, Eigen::Dynamic, 1>;

template <typename T>
T random_value(std::mt19937_64& rng) {
  std::uniform_real_distribution<double> u(-1.0, 1.0);
  if constexpr (std::is_same<T, double>::value) {
    return u(rng);
  } else {
    return T(u(rng), u(rng));
  }
}

template <typename T>
double backward_error(const Matrix<T>& a, const Vector<T>& x, const Vector<T>& b) {
  const double residual = (a * x - b).template lpNorm<Eigen::Infinity>();
  const double norm_a = a.cwiseAbs().rowwise().sum().maxCoeff();
  return residual / (norm_a * x.template lpNorm<Eigen::Infinity>() +
                     b.template lpNorm<Eigen::Infinity>());
}

// A random n x n sparse pattern with a non-zero diagonal (so it is structurally
// non-singular) and about `per_row` extra entries per row.
std::vector<std::pair<std::size_t, std::size_t>> random_pattern(std::mt19937_64& rng,
                                                                std::size_t n, int per_row) {
  std::vector<std::pair<std::size_t, std::size_t>> p;
  std::uniform_int_distribution<std::size_t> col(0, n - 1);
  for (std::size_t i = 0; i < n; ++i) {
    p.emplace_back(i, i);
    for (int k = 0; k < per_row; ++k) p.emplace_back(i, col(rng));
  }
  return p;
}

template <typename T>
Matrix<T> values_on(const std::vector<std::pair<std::size_t, std::size_t>>& pattern,
                    std::size_t n, std::mt19937_64& rng) {
  Matrix<T> a = Matrix<T>::Zero(static_cast<Eigen::Index>(n), static_cast<Eigen::Index>(n));
  for (const auto& e : pattern) {
    a(static_cast<Eigen::Index>(e.first), static_cast<Eigen::Index>(e.second)) =
        random_value<T>(rng);
  }
  return a;
}

template <typename T>
std::vector<T> row_major(const Matrix<T>& a) {
  std::vector<T> out;
  for (Eigen::Index i = 0; i < a.rows(); ++i) {
    for (Eigen::Index j = 0; j < a.cols(); ++j) out.push_back(a(i, j));
  }
  return out;
}

// Fills `lu` with the values of `a` (entries outside the pattern must be zero).
template <typename T>
void load(detail::PatternLU<T>& lu, const Matrix<T>& a) {
  lu.clear_values();
  for (Eigen::Index i = 0; i < a.rows(); ++i) {
    for (Eigen::Index j = 0; j < a.cols(); ++j) {
      const auto s = lu.slot(static_cast<std::size_t>(i), static_cast<std::size_t>(j));
      if (s != detail::PatternLU<T>::npos_slot) {
        lu.values()[s] = a(i, j);
      } else {
        REQUIRE(a(i, j) == T(0));
      }
    }
  }
}

// Factors a fresh matrix on the pattern of `lu`; returns whether the pattern accepted it,
// and when it did checks the solve against the dense one.
template <typename T>
bool check_against_dense(detail::PatternLU<T>& lu, const Matrix<T>& a, std::mt19937_64& rng) {
  const auto n = a.rows();
  load(lu, a);
  const double tiny = static_cast<double>(n) * 2.2e-16 * a.cwiseAbs().maxCoeff();
  if (lu.factor(tiny) != detail::PatternStatus::ok) return false;
  Vector<T> b(n);
  for (Eigen::Index i = 0; i < n; ++i) b(i) = random_value<T>(rng);
  Vector<T> x(n);
  lu.solve(b.data(), x.data());
  const Vector<T> dense = a.partialPivLu().solve(b);
  // Three right-hand sides in one pass give the single solves' answers exactly.
  lu.reserve_columns(3);
  Matrix<T> bs(n, 3), xs(n, 3);
  for (Eigen::Index i = 0; i < n; ++i) {
    bs(i, 0) = random_value<T>(rng);
    bs(i, 1) = b(i);
    bs(i, 2) = random_value<T>(rng);
  }
  lu.solve_block(bs.data(), static_cast<std::size_t>(n), xs.data(), static_cast<std::size_t>(n), 3);
  CHECK((xs.col(1) - x).template lpNorm<Eigen::Infinity>() <=
        1e-14 * x.template lpNorm<Eigen::Infinity>());
  CHECK(backward_error<T>(a, xs.col(0), bs.col(0)) < 1e-13);
  CHECK(backward_error<T>(a, xs.col(2), bs.col(2)) < 1e-13);
  CHECK(backward_error(a, x, b) < 1e-13);
  CHECK(backward_error(a, dense, b) < 1e-13);
  // Forward agreement, where the conditioning allows it to be meaningful.
  const Eigen::JacobiSVD<Matrix<T>> svd(a);
  const double condition = svd.singularValues()(0) / svd.singularValues()(n - 1);
  if (condition < 1e6) {
    CHECK((x - dense).template lpNorm<Eigen::Infinity>() <=
          1e-9 * dense.template lpNorm<Eigen::Infinity>());
  }
  return true;
}

template <typename T>
void random_matrices_agree() {
  std::mt19937_64 rng(7);
  int accepted = 0;
  for (int trial = 0; trial < 60; ++trial) {
    const std::size_t n = 3 + static_cast<std::size_t>(trial % 25);
    const auto pattern = random_pattern(rng, n, 2);
    const Matrix<T> nominal = values_on<T>(pattern, n, rng);
    detail::PatternLU<T> lu;
    if (!lu.analyse(n, pattern, row_major(nominal))) continue;
    // The nominal matrix itself, then small relative changes of every value (a
    // tolerance spread); all must take the pattern path.
    REQUIRE(check_against_dense(lu, nominal, rng));
    std::normal_distribution<double> spread(0.0, 0.05);
    for (int draw = 0; draw < 10; ++draw) {
      Matrix<T> a = nominal;
      for (const auto& e : pattern) {
        a(static_cast<Eigen::Index>(e.first), static_cast<Eigen::Index>(e.second)) *=
            1.0 + spread(rng);
      }
      if (check_against_dense(lu, a, rng)) ++accepted;
    }
  }
  CHECK(accepted > 400);  // nearly all of the 600 perturbed matrices
}

}  // namespace

TEST_CASE("pattern LU matches the dense LU on random sparse real matrices", "[fast][pattern_lu]") {
  random_matrices_agree<double>();
}

TEST_CASE("pattern LU matches the dense LU on random sparse complex matrices",
          "[fast][pattern_lu]") {
  random_matrices_agree<std::complex<double>>();
}

TEST_CASE("pattern LU rejects a reused pivot that has become poor", "[fast][pattern_lu]") {
  // Full 2 x 2: both orders cost the same, so the larger pivot (row 0) is chosen.
  const std::vector<std::pair<std::size_t, std::size_t>> pattern = {{0, 0}, {0, 1}, {1, 0}, {1, 1}};
  detail::PatternLU<double> lu;
  REQUIRE(lu.analyse(2, pattern, {1.0, 1.0, 0.5, 1.0}));
  // Row 0's pivot is now 1e-4 against 1 below it: below the 1 % check.
  lu.clear_values();
  lu.values()[lu.slot(0, 0)] = 1e-4;
  lu.values()[lu.slot(0, 1)] = 1.0;
  lu.values()[lu.slot(1, 0)] = 1.0;
  lu.values()[lu.slot(1, 1)] = 1.0;
  CHECK(lu.factor(1e-300) == detail::PatternStatus::poor_pivot);
  // A zero pivot, and a NaN, are rejected too.
  lu.clear_values();
  lu.values()[lu.slot(0, 1)] = 1.0;
  lu.values()[lu.slot(1, 0)] = 1.0;
  CHECK(lu.factor(1e-300) == detail::PatternStatus::poor_pivot);
  lu.clear_values();
  lu.values()[lu.slot(0, 0)] = std::nan("");
  lu.values()[lu.slot(1, 1)] = 1.0;
  CHECK(lu.factor(1e-300) == detail::PatternStatus::poor_pivot);
  // 3 % of the column still passes and solves correctly: [0.03 1; 1 1] x = [1 2].
  lu.clear_values();
  lu.values()[lu.slot(0, 0)] = 0.03;
  lu.values()[lu.slot(0, 1)] = 1.0;
  lu.values()[lu.slot(1, 0)] = 1.0;
  lu.values()[lu.slot(1, 1)] = 1.0;
  REQUIRE(lu.factor(1e-300) == detail::PatternStatus::ok);
  const double b[2] = {1.0, 2.0};
  double x[2];
  lu.solve(b, x);
  // Closed form (Cramer's rule): det = 0.03 - 1 = -0.97.
  CHECK(x[0] == Approx((1.0 * 1.0 - 1.0 * 2.0) / -0.97).epsilon(1e-13));
  CHECK(x[1] == Approx((0.03 * 2.0 - 1.0 * 1.0) / -0.97).epsilon(1e-13));
}

TEST_CASE("pattern LU refuses a singular nominal matrix", "[fast][pattern_lu]") {
  const std::vector<std::pair<std::size_t, std::size_t>> pattern = {{0, 0}, {0, 1}, {1, 0}, {1, 1}};
  detail::PatternLU<double> lu;
  CHECK_FALSE(lu.analyse(2, pattern, {1.0, 2.0, 2.0, 4.0}));
  CHECK_FALSE(lu.ready());
}

namespace {

struct NetworkCounts {
  int compared = 0;
  std::uint64_t pattern = 0;
  std::uint64_t fallback = 0;
};

// Solves the network at `theta` on the prepared workspace and on a fresh (dense) one.
void compare_network(const Network& network, NetworkWorkspace& prepared,
                     const std::vector<double>& theta, double frequency, NetworkCounts& counts) {
  NetworkWorkspace dense = network.make_workspace();
  const Excitation ex;  // every source and op-amp error at its value
  const auto n = static_cast<Eigen::Index>(network.size());
  if (frequency == 0.0) {
    const SolveStatus want = network.factor_dc(theta.data(), dense);
    const SolveStatus got = network.factor_dc(theta.data(), prepared);
    if (want != SolveStatus::ok) return;  // a singular draw: nothing to compare
    REQUIRE(got == SolveStatus::ok);
    const Eigen::VectorXd x_dense = Eigen::Map<const Eigen::VectorXd>(
        network.solve_dc(theta.data(), ex, dense), n);
    const Eigen::VectorXd x = Eigen::Map<const Eigen::VectorXd>(
        network.solve_dc(theta.data(), ex, prepared), n);
    // The dense workspace still holds the matrix and right-hand side.
    CHECK(backward_error<double>(dense.data().a, x, dense.data().rhs) < 1e-13);
    CHECK(backward_error<double>(dense.data().a, x_dense, dense.data().rhs) < 1e-13);
  } else {
    const SolveStatus want = network.factor_ac(theta.data(), frequency, dense);
    const SolveStatus got = network.factor_ac(theta.data(), frequency, prepared);
    if (want != SolveStatus::ok) return;
    REQUIRE(got == SolveStatus::ok);
    Excitation drive;
    drive.sources_at_value = false;
    drive.opamp_errors = false;
    drive.overrides = {{0, 1.0}};  // VS, the first element
    const Eigen::VectorXcd x_dense = Eigen::Map<const Eigen::VectorXcd>(
        network.solve_ac(theta.data(), drive, dense), n);
    const Eigen::VectorXcd x = Eigen::Map<const Eigen::VectorXcd>(
        network.solve_ac(theta.data(), drive, prepared), n);
    CHECK(backward_error<std::complex<double>>(dense.data().ac, x, dense.data().ac_rhs) < 1e-13);
    CHECK(backward_error<std::complex<double>>(dense.data().ac, x_dense, dense.data().ac_rhs) <
          1e-13);
  }
  ++counts.compared;
}

}  // namespace

TEST_CASE("networks solved on a reused pattern agree with the dense solve", "[fast][pattern_lu]") {
  std::mt19937_64 rng(20261202);
  NetworkCounts dc, ac, wide;
  int networks = 0;
  std::uint64_t pattern_factors = 0, fallbacks = 0;
  for (int attempt = 0; attempt < 400 && networks < 40; ++attempt) {
    const Circuit c = random_circuit(rng);
    const Network network(c);
    const std::vector<double> theta0 = nominal(c);
    NetworkWorkspace ws = network.make_workspace();
    const bool dc_ready = network.prepare_dc(theta0.data(), ws);
    const bool ac_ready = network.prepare_ac(theta0.data(), 1e3, ws);
    if (!dc_ready || !ac_ready) continue;  // a singular random wiring
    ++networks;
    for (int draw = 0; draw < 20; ++draw) {
      // Tolerance-sized spreads: the pattern path throughout.
      const std::vector<double> theta = moved(c, rng, 1.3);
      compare_network(network, ws, theta, 0.0, dc);
      compare_network(network, ws, theta, std::pow(10.0, 1.0 + 5.0 * (draw / 20.0)), ac);
      // Values moved by up to 10^6 either way: some reused pivots turn poor and the
      // dense fallback must give the same answer.
      const std::vector<double> far = moved(c, rng, 1e6);
      compare_network(network, ws, far, 0.0, wide);
      compare_network(network, ws, far, 1e4, wide);
    }
    pattern_factors += ws.data().pattern_factors;
    fallbacks += ws.data().dense_fallbacks;
  }
  CHECK(networks == 40);
  CHECK(dc.compared > 700);
  CHECK(ac.compared > 700);
  // Both paths were taken: the reused pattern nearly always, the fallback sometimes.
  CHECK(pattern_factors > 1400);
  CHECK(fallbacks > 0);
}

TEST_CASE("a prepared network factors on its pattern", "[fast][pattern_lu]") {
  // Closed form: non-inverting gain 1 + R2/R1 = 11 with an ideal op-amp.
  const Study study = make_study(non_inverting(1e3, 10e3, ideal_opamp(), 0.1),
                                 {measure("gain", MeasurementKind::gain, {"VIN"}, {"out"})});
  CHECK(nominal_value(study, "gain") == Approx(11.0).epsilon(1e-12));
  NetworkWorkspace ws = study.network().make_workspace();
  const std::vector<double> theta = study.nominal_parameters();
  REQUIRE(study.network().prepare_dc(theta.data(), ws));
  REQUIRE(study.network().factor_dc(theta.data(), ws) == SolveStatus::ok);
  CHECK(ws.data().pattern_factors == 1);
  CHECK(ws.data().dense_fallbacks == 0);
}
