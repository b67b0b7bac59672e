#include "variation/model.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <limits>
#include <map>
#include <utility>

#include <Eigen/Cholesky>
#include <Eigen/Dense>

#include "lotwise/error.hpp"
#include "variation/sampler.hpp"

namespace lotwise::detail {
namespace {

constexpr std::size_t npos = static_cast<std::size_t>(-1);

std::string joined(const std::vector<std::string>& names) {
  std::string out;
  for (const auto& n : names) out += (out.empty() ? "" : ",") + n;
  return out;
}

std::string number(double v) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%g", v);
  return buf;
}

// Positive definite with every conditional variance (squared pivot) above a floor: a
// correlation within rounding of perfect is as useless to sample as a perfect one.
bool positive_definite(const Eigen::MatrixXd& c, Eigen::MatrixXd* factor = nullptr) {
  Eigen::LLT<Eigen::MatrixXd> llt(c);
  if (llt.info() != Eigen::Success) return false;
  const Eigen::MatrixXd l = llt.matrixL();
  for (Eigen::Index i = 0; i < l.rows(); ++i) {
    if (!(l(i, i) * l(i, i) > 1e-10)) return false;
  }
  if (factor) *factor = l;
  return true;
}

}  // namespace

std::size_t VariationModel::add_coordinate(bool normal, std::string name) {
  coordinates_.push_back(Coordinate{normal, std::move(name), false});
  return coordinates_.size() - 1;
}

VariationModel::VariationModel(const Circuit& circuit, const std::vector<Variation>& variations,
                               const std::vector<Correlation>& correlations,
                               const Temperature& temperature)
    : temperature_(temperature) {
  validate_temperature(temperature_);
  const auto& params = circuit.parameters();
  std::vector<std::size_t> owner(params.size(), npos);
  std::vector<std::size_t> part_coordinate(params.size(), npos);
  for (std::size_t k = 0; k < variations.size(); ++k) {
    const Variation& v = variations[k];
    std::vector<std::size_t> targets;
    try {
      targets = resolve_targets(circuit, v);
    } catch (const DesignError& e) {
      throw DesignError("variation " + std::to_string(k + 1) + ": " + e.what());
    }
    const std::size_t first = entries_.size();
    for (std::size_t p : targets) {
      if (owner[p] != npos) {
        throw DesignError("parameter '" + params[p].name + "' is spread by both "
                          "variation " + std::to_string(owner[p] + 1) + " and variation " +
                          std::to_string(k + 1) + "; give each parameter one variation");
      }
      owner[p] = k;
      entries_.push_back(Entry{p, params[p].nominal, v.tempco, v.tempco_relative,
                               v.tempco != 0.0});
    }
    const std::size_t last = entries_.size();
    const std::string group = joined(v.targets);
    auto value_scale = [&](std::size_t e) {
      return v.relative ? std::abs(entries_[e].nominal) : 1.0;
    };
    auto add_term = [&](std::size_t coordinate, std::size_t e, bool coefficient,
                        const Spread& spread, double scale) {
      terms_.push_back(Term{coordinate, e, coefficient, spread, scale});
      entries_[e].varies = true;
    };
    const bool matched = v.ratio_tolerance > 0.0;

    // Deviations of the value: the lot's share, a matched network's common share, and
    // each part's own.
    if (v.lot_tolerance > 0.0) {
      const Spread lot = make_spread(v.lot_distribution, v.lot_tolerance, v.sigmas);
      const std::size_t c = add_coordinate(lot.wants_normal(), "lot of " + group);
      coordinates_[c].lot = true;
      for (std::size_t e = first; e < last; ++e) add_term(c, e, false, lot, value_scale(e));
    }
    Spread own = make_spread(v.distribution, v.tolerance, v.sigmas, v.inner_tolerance);
    if (matched) {
      // Member = common + own: (t/k)^2 = common^2 + own^2 and the ratio of two members
      // spreads by sqrt(2) own = r/k.
      const double sigma = v.tolerance / v.sigmas;
      const double own_sigma = v.ratio_tolerance / v.sigmas / std::sqrt(2.0);
      const double common_sigma = std::sqrt(std::max(0.0, sigma * sigma - own_sigma * own_sigma));
      if (common_sigma > 0.0) {
        const Spread common = make_spread(Distribution::normal, common_sigma * v.sigmas, v.sigmas);
        const std::size_t c = add_coordinate(true, "network of " + group);
        for (std::size_t e = first; e < last; ++e) add_term(c, e, false, common, value_scale(e));
      }
      own = make_spread(Distribution::normal, own_sigma * v.sigmas, v.sigmas);
    }
    if (v.distribution != Distribution::fixed) {
      for (std::size_t e = first; e < last; ++e) {
        const std::size_t p = entries_[e].parameter;
        const std::size_t c = add_coordinate(own.wants_normal(), params[p].name);
        part_coordinate[p] = c;
        add_term(c, e, false, own, value_scale(e));
      }
    }

    // Deviations of the temperature coefficient: per part, or shared by a matched
    // network whose members then differ by the tracking only.
    if (v.tempco_tolerance > 0.0) {
      const Spread spread = make_spread(v.tempco_distribution, v.tempco_tolerance, v.sigmas);
      if (matched) {
        const std::size_t c = add_coordinate(spread.wants_normal(), "network tempco of " + group);
        for (std::size_t e = first; e < last; ++e) add_term(c, e, true, spread, 1.0);
      } else {
        for (std::size_t e = first; e < last; ++e) {
          const std::size_t c =
              add_coordinate(spread.wants_normal(), params[entries_[e].parameter].name + ".tempco");
          add_term(c, e, true, spread, 1.0);
        }
      }
    }
    if (matched && v.tempco_tracking > 0.0) {
      const Spread spread = make_spread(Distribution::uniform, 0.5 * v.tempco_tracking, v.sigmas);
      for (std::size_t e = first; e < last; ++e) {
        const std::size_t c =
            add_coordinate(false, params[entries_[e].parameter].name + ".tempco_tracking");
        add_term(c, e, true, spread, 1.0);
      }
    }
  }
  if (temperature_.drawn) temperature_coordinate_ = add_coordinate(false, "temperature");
  set_correlations(circuit, correlations, part_coordinate);
  plan_fast_paths();
}

void VariationModel::set_correlations(const Circuit& circuit,
                                      const std::vector<Correlation>& correlations,
                                      const std::vector<std::size_t>& part_coordinate) {
  if (correlations.empty()) return;
  const auto& params = circuit.parameters();
  // Coefficient of each pair of coordinates, and which correlation set it.
  std::map<std::pair<std::size_t, std::size_t>, std::pair<double, std::size_t>> pairs;
  std::vector<bool> used(coordinates_.size(), false);
  for (std::size_t k = 0; k < correlations.size(); ++k) {
    const Correlation& c = correlations[k];
    const std::string where = "correlation " + std::to_string(k + 1);
    if (!std::isfinite(c.coefficient) || !(std::abs(c.coefficient) < 1.0)) {
      throw DesignError(where + ": the coefficient must lie strictly between -1 and 1 (a "
                        "perfect correlation is a shared deviation: use lot_tolerance or a "
                        "matched network)");
    }
    std::vector<std::size_t> found;
    try {
      found = resolve_names(circuit, c.parameters);
    } catch (const DesignError& e) {
      throw DesignError(where + ": " + e.what());
    }
    if (found.size() < 2) {
      throw DesignError(where + " selects only '" + params[found.front()].name +
                        "'; it needs at least two parameters");
    }
    for (std::size_t p : found) {
      if (part_coordinate[p] == npos) {
        throw DesignError(where + ": '" + params[p].name + "' has no part-to-part spread to "
                          "correlate (no variation covers it, or its distribution is fixed)");
      }
      used[part_coordinate[p]] = true;
    }
    for (std::size_t i = 0; i < found.size(); ++i) {
      for (std::size_t j = i + 1; j < found.size(); ++j) {
        std::size_t a = part_coordinate[found[i]], b = part_coordinate[found[j]];
        if (a > b) std::swap(a, b);
        const auto it = pairs.find({a, b});
        if (it != pairs.end() && it->second.first != c.coefficient) {
          throw DesignError("'" + coordinates_[a].name + "' and '" + coordinates_[b].name +
                            "' are given the coefficient " + number(it->second.first) +
                            " by correlation " + std::to_string(it->second.second + 1) +
                            " and " + number(c.coefficient) + " by " + where);
        }
        pairs[{a, b}] = {c.coefficient, k};
      }
    }
  }
  std::vector<std::size_t> slot(coordinates_.size(), npos);
  for (std::size_t c = 0; c < coordinates_.size(); ++c) {
    if (!used[c]) continue;
    slot[c] = correlated_.size();
    correlated_.push_back(c);
    coordinates_[c].normal = true;  // mixed as normal scores
  }
  const auto m = static_cast<Eigen::Index>(correlated_.size());
  Eigen::MatrixXd matrix = Eigen::MatrixXd::Identity(m, m);
  for (const auto& [pair, value] : pairs) {
    const auto i = static_cast<Eigen::Index>(slot[pair.first]);
    const auto j = static_cast<Eigen::Index>(slot[pair.second]);
    matrix(i, j) = matrix(j, i) = value.first;
  }
  Eigen::MatrixXd factor;
  if (!positive_definite(matrix, &factor)) {
    // The first leading block that fails has a new last row. Blame the given coefficient
    // in it that needs the smallest change to mend the block (each alone has an interval
    // of values that would), the larger one on a tie.
    Eigen::Index n = 2;
    while (n < m && positive_definite(matrix.topLeftCorner(n, n))) ++n;
    const Eigen::Index row = n - 1;
    auto given = [&](Eigen::Index j) {
      std::size_t a = correlated_[static_cast<std::size_t>(j)];
      std::size_t b = correlated_[static_cast<std::size_t>(row)];
      if (a > b) std::swap(a, b);
      return pairs.count({a, b}) > 0;
    };
    Eigen::Index blamed = -1;
    double best = std::numeric_limits<double>::infinity(), low = 0.0, high = 0.0;
    for (Eigen::Index j = 0; j < row; ++j) {
      if (!given(j)) continue;
      Eigen::MatrixXd trial = matrix.topLeftCorner(n, n);
      double lo = 2.0, hi = -2.0;
      for (int step = -999; step <= 999; ++step) {
        const double c = step / 1000.0;
        trial(row, j) = trial(j, row) = c;
        if (positive_definite(trial)) {
          lo = std::min(lo, c);
          hi = std::max(hi, c);
        }
      }
      const double now = matrix(row, j);
      const double change = lo > hi ? std::numeric_limits<double>::infinity()
                                    : (now < lo ? lo - now : now - hi);
      if (blamed < 0 || change < best ||
          (change == best && std::abs(now) > std::abs(matrix(row, blamed)))) {
        blamed = j;
        best = change;
        low = lo;
        high = hi;
      }
    }
    std::string among;
    for (Eigen::Index j = 0; j <= row; ++j) {
      among += (j ? ", " : "") + coordinates_[correlated_[static_cast<std::size_t>(j)]].name;
    }
    const std::string a = coordinates_[correlated_[static_cast<std::size_t>(blamed)]].name;
    const std::string b = coordinates_[correlated_[static_cast<std::size_t>(row)]].name;
    std::string hint;
    if (std::isfinite(best)) {
      hint = " (with the others it would have to lie between " + number(low) + " and " +
             number(high) + ")";
    }
    throw DesignError("the correlations are not consistent (their matrix is not positive "
                      "definite): the coefficient " + number(matrix(row, blamed)) +
                      " between '" + a + "' and '" + b + "' cannot hold together with the "
                      "others among " + among + hint + "; change it or the others");
  }
  cholesky_.assign(static_cast<std::size_t>(m * m), 0.0);
  for (Eigen::Index i = 0; i < m; ++i) {
    for (Eigen::Index j = 0; j <= i; ++j) {
      cholesky_[static_cast<std::size_t>(i * m + j)] = factor(i, j);
    }
  }
}

void VariationModel::plan_fast_paths() {
  // Value and coefficient terms per entry: a plain term must be its entry's only value term.
  std::vector<std::size_t> value_terms(entries_.size(), 0), coefficient_terms(entries_.size(), 0);
  for (const Term& t : terms_) ++(t.coefficient ? coefficient_terms : value_terms)[t.entry];
  std::vector<bool> plain(entries_.size(), false);
  for (std::size_t k = 0; k < terms_.size(); ++k) {
    const Term& t = terms_[k];
    const bool normal = coordinates_[t.coordinate].normal;
    const Distribution kind = t.spread.kind;
    if (!t.coefficient && value_terms[t.entry] == 1 && normal == t.spread.wants_normal() &&
        (kind == Distribution::normal || kind == Distribution::uniform)) {
      (kind == Distribution::normal ? plain_normal_ : plain_uniform_)
          .push_back(PlainTerm{t.coordinate, t.entry, t.spread.scale, t.scale});
      plain[t.entry] = true;
      continue;
    }
    Convert convert = Convert::none;
    if (normal != t.spread.wants_normal()) convert = normal ? Convert::to_uniform : Convert::to_normal;
    general_.push_back(GeneralTerm{k, convert});
  }
  for (std::size_t e = 0; e < entries_.size(); ++e) {
    if (!plain[e]) summed_.push_back(e);
    if (coefficient_terms[e] > 0) coefficients_.push_back(e);
    const Entry& entry = entries_[e];
    const Target target{entry.parameter, e, entry.nominal};
    // A zero coefficient times a finite shift adds or multiplies by nothing (the value
    // is never -0: it is nominal + a sum started from +0).
    if (coefficient_terms[e] == 0 && entry.coefficient == 0.0) {
      constant_.push_back(target);
    } else {
      (entry.relative_coefficient ? relative_ : absolute_).push_back(target);
    }
  }
  // One pass from point to values when every entry is plain and constant over temperature.
  if (correlated_.empty() && general_.empty() && summed_.empty() && relative_.empty() &&
      absolute_.empty() && !constant_.empty()) {
    for (const auto* terms : {&plain_normal_, &plain_uniform_}) {
      for (const PlainTerm& t : *terms) {
        const Entry& entry = entries_[t.entry];
        (terms == &plain_normal_ ? value_normal_ : value_uniform_)
            .push_back(PlainValue{t.coordinate, entry.parameter, entry.nominal, t.spread, t.scale});
      }
    }
  }
}

BuildScratch VariationModel::make_scratch() const {
  BuildScratch s;
  s.x.assign(coordinates_.size(), 0.0);
  s.z.assign(correlated_.size(), 0.0);
  s.deviation.assign(entries_.size(), 0.0);
  s.coefficient.resize(entries_.size());
  for (std::size_t e = 0; e < entries_.size(); ++e) s.coefficient[e] = entries_[e].coefficient;
  s.temperature = temperature_.reference;
  return s;
}

void VariationModel::prepare(const double* point, BuildScratch& s) const {
  // Without correlation the terms read the point itself.
  const double* x = point;
  const std::size_t m = correlated_.size();
  if (m > 0) {
    for (std::size_t i = 0; i < coordinates_.size(); ++i) s.x[i] = point[i];
    for (std::size_t i = 0; i < m; ++i) s.z[i] = s.x[correlated_[i]];
    for (std::size_t i = 0; i < m; ++i) {
      const double* row = &cholesky_[i * m];
      double sum = 0.0;
      for (std::size_t j = 0; j <= i; ++j) sum += row[j] * s.z[j];
      s.x[correlated_[i]] = sum;
    }
    x = s.x.data();
  }
  double* deviation = s.deviation.data();
  double* coefficient = s.coefficient.data();
  for (const PlainTerm& t : plain_normal_) {
    deviation[t.entry] = (t.spread * x[t.coordinate]) * t.scale + 0.0;
  }
  for (const PlainTerm& t : plain_uniform_) {
    deviation[t.entry] = (t.spread * (2.0 * x[t.coordinate] - 1.0)) * t.scale + 0.0;
  }
  if (!general_.empty()) {
    for (std::size_t e : summed_) deviation[e] = 0.0;
    for (std::size_t e : coefficients_) coefficient[e] = entries_[e].coefficient;
    for (const GeneralTerm& g : general_) {
      const Term& t = terms_[g.term];
      double v = x[t.coordinate];
      // A correlated normal score feeding a law that takes a uniform coordinate.
      if (g.convert == Convert::to_uniform) v = normal_cdf(v);
      else if (g.convert == Convert::to_normal) v = normal_quantile(v);
      const double d = t.spread.map(v) * t.scale;
      (t.coefficient ? coefficient : deviation)[t.entry] += d;
    }
  }
  if (temperature_coordinate_ != npos) {
    s.temperature = temperature_.low + (temperature_.high - temperature_.low) * x[temperature_coordinate_];
  }
}

void VariationModel::prepare_values(const double* points, std::size_t count, BuildScratch* scratch,
                                    double* theta, std::size_t theta_stride) const {
  // prepare()'s plain terms and apply()'s nominal + deviation, the same operations; one
  // term across the builds keeps its constants in registers.
  const std::size_t d = dimension();
  // The law's standard deviate from the coordinate: z itself, or 2u - 1.
  auto map = [&](const std::vector<PlainValue>& terms, auto deviate) {
    for (const PlainValue& t : terms) {
      const double* x = points + t.coordinate;
      double* out = theta + t.parameter;
      const double nominal = t.nominal, spread = t.spread, scale = t.scale;
      for (std::size_t b = 0; b < count; ++b) {
        out[b * theta_stride] = nominal + ((spread * deviate(x[b * d])) * scale + 0.0);
      }
    }
  };
  map(value_normal_, [](double z) { return z; });
  map(value_uniform_, [](double u) { return 2.0 * u - 1.0; });
  if (temperature_coordinate_ != npos) {
    for (std::size_t b = 0; b < count; ++b) {
      scratch[b].temperature =
          temperature_.low + (temperature_.high - temperature_.low) * points[b * d + temperature_coordinate_];
    }
  }
}

void VariationModel::apply(const BuildScratch& s, double celsius, double* theta) const {
  const double shift = celsius - temperature_.reference;
  const double* deviation = s.deviation.data();
  const double* coefficient = s.coefficient.data();
  if (!std::isfinite(shift)) {
    // Zero coefficients times a shift that is not finite are not nothing.
    for (std::size_t e = 0; e < entries_.size(); ++e) {
      const Entry& entry = entries_[e];
      const double value = entry.nominal + deviation[e];
      const double c = coefficient[e];
      theta[entry.parameter] =
          entry.relative_coefficient ? value * (1.0 + c * shift) : value + c * shift;
    }
    return;
  }
  for (const Target& t : constant_) theta[t.parameter] = t.nominal + deviation[t.entry];
  for (const Target& t : relative_) {
    theta[t.parameter] = (t.nominal + deviation[t.entry]) * (1.0 + coefficient[t.entry] * shift);
  }
  for (const Target& t : absolute_) {
    theta[t.parameter] = (t.nominal + deviation[t.entry]) + coefficient[t.entry] * shift;
  }
}

}  // namespace lotwise::detail
