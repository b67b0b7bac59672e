#include "lotwise/network.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <sstream>
#include <type_traits>

#include "lotwise/error.hpp"
#include "mna/layout.hpp"

namespace lotwise {

using detail::MatrixStamp;
using detail::StampKind;

const char* to_string(SolveStatus status) {
  switch (status) {
    case SolveStatus::ok: return "ok";
    case SolveStatus::singular: return "singular";
    case SolveStatus::invalid_value: return "invalid_value";
  }
  return "?";
}

NetworkWorkspace::NetworkWorkspace(std::unique_ptr<Data> data) : data_(std::move(data)) {}
NetworkWorkspace::NetworkWorkspace(NetworkWorkspace&&) noexcept = default;
NetworkWorkspace& NetworkWorkspace::operator=(NetworkWorkspace&&) noexcept = default;
NetworkWorkspace::~NetworkWorkspace() = default;

std::size_t Network::Layout::node(const std::string& name) const {
  if (name == circuit.ground()) return npos;
  const auto& names = circuit.nodes();
  const auto it = std::find(names.begin(), names.end(), name);
  return it == names.end() ? npos : static_cast<std::size_t>(it - names.begin());
}

namespace {

bool has_branch(ElementKind kind) {
  return kind == ElementKind::voltage_source || kind == ElementKind::inductor ||
         kind == ElementKind::vcvs || kind == ElementKind::ccvs || kind == ElementKind::opamp;
}

// Collects stamps, dropping those that touch ground.
struct StampSink {
  Network::Layout& layout;
  void matrix(std::size_t row, std::size_t col, StampKind kind, std::size_t p, double sign,
              std::size_t q = 0, OpAmpModel model = OpAmpModel::ideal) {
    if (row == Network::npos || col == Network::npos) return;
    layout.matrix.push_back(MatrixStamp{row, col, kind, p, q, sign, model});
  }
  // A two-terminal admittance-like stamp between nodes a and b.
  void admittance(std::size_t a, std::size_t b, StampKind kind, std::size_t p) {
    matrix(a, a, kind, p, 1.0);
    matrix(b, b, kind, p, 1.0);
    matrix(a, b, kind, p, -1.0);
    matrix(b, a, kind, p, -1.0);
  }
  // Branch current k leaves node a and enters node b; row k reads V(a) - V(b).
  void branch(std::size_t a, std::size_t b, std::size_t k) {
    matrix(a, k, StampKind::constant, 0, 1.0);
    matrix(b, k, StampKind::constant, 0, -1.0);
    matrix(k, a, StampKind::constant, 0, 1.0);
    matrix(k, b, StampKind::constant, 0, -1.0);
  }
  void source(std::size_t row, std::size_t element, std::size_t p, double sign) {
    if (row == Network::npos) return;
    layout.sources.push_back(detail::SourceStamp{row, element, p, sign});
  }
  void error(std::size_t row, std::size_t p, double sign) {
    if (row == Network::npos) return;
    layout.errors.push_back(detail::ErrorStamp{row, p, sign});
  }
};

double real_stamp(const MatrixStamp& s, const double* theta) {
  switch (s.kind) {
    case StampKind::constant: return s.sign;
    case StampKind::conductance: return s.sign / theta[s.p];
    case StampKind::value: return s.sign * theta[s.p];
    case StampKind::susceptance:
    case StampKind::reactance: return 0.0;
    case StampKind::inverse_gain:
      return s.model == OpAmpModel::ideal ? 0.0 : s.sign / theta[s.p];
  }
  return 0.0;
}

std::complex<double> complex_stamp(const MatrixStamp& s, const double* theta, double frequency) {
  constexpr double two_pi = 6.283185307179586476925;
  switch (s.kind) {
    case StampKind::susceptance:
    case StampKind::reactance:
      return {0.0, s.sign * two_pi * frequency * theta[s.p]};
    case StampKind::inverse_gain:
      switch (s.model) {
        case OpAmpModel::ideal: return 0.0;
        case OpAmpModel::finite_gain: return s.sign / theta[s.p];
        // 1/A(jw) = 1/A0 + j f / GBW for A(s) = A0 / (1 + s A0 / (2 pi GBW)).
        case OpAmpModel::single_pole:
          return {s.sign / theta[s.p], s.sign * frequency / theta[s.q]};
      }
      return 0.0;
    default: return real_stamp(s, theta);
  }
}

// A pivot this small against the largest matrix entry means the draw is singular
// (the nominal check diagnoses why).
template <typename Lu, typename Matrix>
SolveStatus pivot_status(const Lu& lu, const Matrix& a) {
  const auto n = a.rows();
  if (n == 0) return SolveStatus::ok;
  const double scale = a.cwiseAbs().maxCoeff();
  if (!std::isfinite(scale)) return SolveStatus::invalid_value;
  const double tiny = static_cast<double>(n) * std::numeric_limits<double>::epsilon() * scale;
  const auto& m = lu.matrixLU();
  for (Eigen::Index i = 0; i < n; ++i) {
    const double pivot = std::abs(m(i, i));
    if (!(pivot > tiny)) return SolveStatus::singular;
  }
  return SolveStatus::ok;
}

}  // namespace

Network::Network(const Circuit& circuit) : layout_(std::make_unique<Layout>()) {
  Layout& L = *layout_;
  L.circuit = circuit;
  detail::check_topology(circuit);

  const auto& elements = circuit.elements();
  L.nodes = circuit.nodes().size();
  for (const auto& n : circuit.nodes()) L.unknown_names.push_back("node '" + n + "'");
  L.branch_of_element.assign(elements.size(), npos);
  std::size_t next = L.nodes;
  for (std::size_t e = 0; e < elements.size(); ++e) {
    if (!has_branch(elements[e].kind)) continue;
    L.branch_of_element[e] = next++;
    L.unknown_names.push_back(elements[e].kind == ElementKind::opamp
                                  ? "output current of " + elements[e].name
                                  : "current through " + elements[e].name);
  }
  L.size = next;

  auto control_branch = [&](const Element& el) {
    const std::size_t c = circuit.find_element(el.control_source);
    if (c == Circuit::npos || elements[c].kind != ElementKind::voltage_source) {
      throw CircuitError("element '" + el.name + "' (" + to_string(el.kind) +
                         ") is controlled by the current of '" + el.control_source +
                         "', which is not a voltage source in this circuit");
    }
    return L.branch_of_element[c];
  };

  L.opamp_of_element.assign(elements.size(), npos);
  StampSink sink{L};
  for (std::size_t e = 0; e < elements.size(); ++e) {
    const Element& el = elements[e];
    const std::size_t p = el.parameters.front();
    const std::size_t a = L.node(el.nodes[0]);
    const std::size_t b = L.node(el.nodes[1]);
    const std::size_t k = L.branch_of_element[e];
    switch (el.kind) {
      case ElementKind::resistor: sink.admittance(a, b, StampKind::conductance, p); break;
      case ElementKind::capacitor: sink.admittance(a, b, StampKind::susceptance, p); break;
      case ElementKind::inductor:
        sink.branch(a, b, k);
        sink.matrix(k, k, StampKind::reactance, p, -1.0);
        break;
      case ElementKind::voltage_source:
        sink.branch(a, b, k);
        sink.source(k, e, p, 1.0);
        break;
      case ElementKind::current_source:
        sink.source(a, e, p, -1.0);
        sink.source(b, e, p, 1.0);
        break;
      case ElementKind::vcvs: {
        const std::size_t cp = L.node(el.control_nodes[0]);
        const std::size_t cn = L.node(el.control_nodes[1]);
        sink.branch(a, b, k);
        sink.matrix(k, cp, StampKind::value, p, -1.0);
        sink.matrix(k, cn, StampKind::value, p, 1.0);
        break;
      }
      case ElementKind::vccs: {
        const std::size_t cp = L.node(el.control_nodes[0]);
        const std::size_t cn = L.node(el.control_nodes[1]);
        sink.matrix(a, cp, StampKind::value, p, 1.0);
        sink.matrix(a, cn, StampKind::value, p, -1.0);
        sink.matrix(b, cp, StampKind::value, p, -1.0);
        sink.matrix(b, cn, StampKind::value, p, 1.0);
        break;
      }
      case ElementKind::ccvs: {
        const std::size_t kc = control_branch(el);
        sink.branch(a, b, k);
        sink.matrix(k, kc, StampKind::value, p, -1.0);
        break;
      }
      case ElementKind::cccs: {
        const std::size_t kc = control_branch(el);
        sink.matrix(a, kc, StampKind::value, p, 1.0);
        sink.matrix(b, kc, StampKind::value, p, -1.0);
        break;
      }
      case ElementKind::opamp: {
        // Row k: V(+) - V(-) - V(out)/A = -Vos; the output current k enters node out.
        const std::size_t out = L.node(el.nodes[2]);
        const std::size_t a0 = el.parameters[0];
        const std::size_t gbw = el.parameters[1];
        sink.matrix(out, k, StampKind::constant, 0, -1.0);
        sink.matrix(k, a, StampKind::constant, 0, 1.0);
        sink.matrix(k, b, StampKind::constant, 0, -1.0);
        sink.matrix(k, out, StampKind::inverse_gain, a0, -1.0, gbw, el.model);
        sink.error(k, el.parameters[2], -1.0);  // offset
        sink.error(a, el.parameters[3], -1.0);  // bias current drawn from the + input
        sink.error(b, el.parameters[4], -1.0);  // bias current drawn from the - input
        detail::OpAmpOutput o{e, k, out, npos, npos, npos, npos};
        const auto& params = circuit.parameters();
        for (std::size_t i = 5; i < el.parameters.size(); ++i) {
          const std::string& n = params[el.parameters[i]].name;
          const std::string suffix = n.substr(n.find('.') + 1);
          if (suffix == "output_high" || suffix == "supply_high") o.high = el.parameters[i];
          else if (suffix == "headroom_high") o.headroom_high = el.parameters[i];
          else if (suffix == "output_low" || suffix == "supply_low") o.low = el.parameters[i];
          else if (suffix == "headroom_low") o.headroom_low = el.parameters[i];
        }
        L.opamp_of_element[e] = L.opamps.size();
        L.opamps.push_back(o);
        break;
      }
    }
  }
}

Network::~Network() = default;
Network::Network(const Network& other) : layout_(std::make_unique<Layout>(*other.layout_)) {}
Network& Network::operator=(const Network& other) {
  if (this != &other) layout_ = std::make_unique<Layout>(*other.layout_);
  return *this;
}
Network::Network(Network&&) noexcept = default;
Network& Network::operator=(Network&&) noexcept = default;

const Circuit& Network::circuit() const { return layout_->circuit; }
std::size_t Network::size() const { return layout_->size; }
std::size_t Network::node_index(const std::string& node) const { return layout_->node(node); }
std::string Network::unknown_name(std::size_t i) const { return layout_->unknown_names.at(i); }

NetworkWorkspace Network::make_workspace(std::size_t slots) const {
  const auto n = static_cast<Eigen::Index>(layout_->size);
  const auto s = static_cast<Eigen::Index>(std::max<std::size_t>(slots, 1));
  auto d = std::make_unique<NetworkWorkspace::Data>();
  d->a = Eigen::MatrixXd::Zero(n, n);
  d->lu = Eigen::PartialPivLU<Eigen::MatrixXd>(n);
  d->rhs = Eigen::VectorXd::Zero(n);
  d->rhs_block = Eigen::MatrixXd::Zero(n, s);
  d->held_row.assign(layout_->size, 0);
  d->x = Eigen::MatrixXd::Zero(n, s);
  d->ac = Eigen::MatrixXcd::Zero(n, n);
  d->ac_lu = Eigen::PartialPivLU<Eigen::MatrixXcd>(n);
  d->ac_rhs = Eigen::VectorXcd::Zero(n);
  d->ac_rhs_block = Eigen::MatrixXcd::Zero(n, s);
  d->ac_x = Eigen::MatrixXcd::Zero(n, s);
  return NetworkWorkspace(std::move(d));
}

namespace {

OutputLimits limits_of(const detail::OpAmpOutput& o, const double* theta) {
  return detail::limits_of(o, [theta](std::size_t p) { return theta[p]; });
}

}  // namespace

SolveStatus Network::check_values(const double* parameters) const {
  const auto& params = layout_->circuit.parameters();
  for (std::size_t i = 0; i < params.size(); ++i) {
    const double v = parameters[i];
    if (!std::isfinite(v) || (params[i].positive && !(v > 0.0))) return SolveStatus::invalid_value;
  }
  // A draw whose output swing has closed up (high limit at or below the low one).
  for (const auto& o : layout_->opamps) {
    const OutputLimits l = limits_of(o, parameters);
    if (!(l.high > l.low)) return SolveStatus::invalid_value;
  }
  return SolveStatus::ok;
}

OutputLimits Network::output_limits(const double* parameters, std::size_t element) const {
  const std::size_t i = element < layout_->opamp_of_element.size()
                            ? layout_->opamp_of_element[element]
                            : npos;
  if (i == npos) {
    throw Error("output_limits: element " + std::to_string(element) + " is not an op-amp");
  }
  return limits_of(layout_->opamps[i], parameters);
}

bool Network::has_output_limits(std::size_t element) const {
  const std::size_t i = element < layout_->opamp_of_element.size()
                            ? layout_->opamp_of_element[element]
                            : npos;
  return i != npos && layout_->opamps[i].high != npos && layout_->opamps[i].low != npos;
}

SolveStatus Network::factor_dc(const double* parameters, NetworkWorkspace& ws) const {
  static const std::vector<std::size_t> none;
  return factor_dc(parameters, ws, none);
}

namespace {

// Marks the branch rows of the held outputs in d.held_row; throws for a non-op-amp.
void mark_held(const Network::Layout& L, NetworkWorkspace::Data& d,
               const std::vector<std::size_t>& held_outputs) {
  std::fill(d.held_row.begin(), d.held_row.end(), static_cast<unsigned char>(0));
  for (const std::size_t e : held_outputs) {
    const std::size_t i = e < L.opamp_of_element.size() ? L.opamp_of_element[e] : Network::npos;
    if (i == Network::npos) {
      throw Error("factor_dc: held element " + std::to_string(e) + " is not an op-amp");
    }
    d.held_row[L.opamps[i].branch] = 1;
  }
}

// The dense DC matrix into d.a (held rows as marked in d.held_row).
void fill_dense_dc(const Network::Layout& L, const double* parameters, NetworkWorkspace::Data& d,
                   const std::vector<std::size_t>& held_outputs) {
  d.a.setZero();
  for (const auto& s : L.matrix) {
    if (d.held_row[s.row]) continue;  // the held op-amp's branch equation, replaced below
    d.a(static_cast<Eigen::Index>(s.row), static_cast<Eigen::Index>(s.col)) +=
        real_stamp(s, parameters);
  }
  for (const std::size_t e : held_outputs) {
    const auto& o = L.opamps[L.opamp_of_element[e]];
    d.a(static_cast<Eigen::Index>(o.branch), static_cast<Eigen::Index>(o.out)) = 1.0;
  }
}

void fill_dense_ac(const Network::Layout& L, const double* parameters, double frequency,
                   NetworkWorkspace::Data& d) {
  d.ac.setZero();
  for (const auto& s : L.matrix) {
    d.ac(static_cast<Eigen::Index>(s.row), static_cast<Eigen::Index>(s.col)) +=
        complex_stamp(s, parameters, frequency);
  }
}

// Whether a stamp can be non-zero in a DC (or AC) matrix.
bool stamp_present(const MatrixStamp& s, bool ac) {
  if (s.kind == StampKind::inverse_gain && s.model == OpAmpModel::ideal) return false;
  if (!ac && (s.kind == StampKind::susceptance || s.kind == StampKind::reactance)) return false;
  return true;
}

template <typename T>
std::uint32_t reciprocal_index(detail::PatternFill<T>& f, std::size_t p) {
  const auto it = std::find(f.inverse.begin(), f.inverse.end(), p);
  if (it != f.inverse.end()) return static_cast<std::uint32_t>(it - f.inverse.begin());
  f.inverse.push_back(p);
  return static_cast<std::uint32_t>(f.inverse.size() - 1);
}

// Compiles the stamps into a fill plan for `pattern` (whose LU has been analysed).
template <typename T>
void compile_fill(const Network::Layout& L, const unsigned char* held_row,
                  const std::vector<std::size_t>& held_outputs, bool ac,
                  detail::Pattern<T>& pattern) {
  constexpr double two_pi = 6.283185307179586476925;
  auto& f = pattern.fill;
  f = detail::PatternFill<T>();
  f.constants.assign(pattern.lu.nonzeros(), T(0));
  for (const auto& s : L.matrix) {
    if ((held_row && held_row[s.row]) || !stamp_present(s, ac)) continue;
    const std::uint32_t slot = pattern.lu.slot(s.row, s.col);
    switch (s.kind) {
      case StampKind::constant: f.constants[slot] += s.sign; break;
      case StampKind::conductance:
        f.real_reciprocal.push_back({slot, reciprocal_index(f, s.p), s.sign});
        break;
      case StampKind::value:
        f.real_value.push_back({slot, static_cast<std::uint32_t>(s.p), s.sign});
        break;
      case StampKind::susceptance:
      case StampKind::reactance:
        f.imag_value.push_back({slot, static_cast<std::uint32_t>(s.p), two_pi * s.sign});
        break;
      case StampKind::inverse_gain:
        f.real_reciprocal.push_back({slot, reciprocal_index(f, s.p), s.sign});
        if (ac && s.model == OpAmpModel::single_pole) {
          f.imag_reciprocal.push_back({slot, reciprocal_index(f, s.q), s.sign});
        }
        break;
    }
  }
  for (const std::size_t e : held_outputs) {
    const auto& o = L.opamps[L.opamp_of_element[e]];
    f.constants[pattern.lu.slot(o.branch, o.out)] = 1.0;
  }
  f.reciprocal.assign(f.inverse.size(), 0.0);
}

// Refills the pattern's values for `theta` (and frequency, AC) and factors them.
// Returns false when the pivot order does not suit this matrix (the dense path decides).
template <typename T>
bool factor_pattern(detail::Pattern<T>& pattern, const double* theta, double frequency) {
  T* v = pattern.lu.values();
  detail::fill_values(pattern.fill, theta, frequency, v, pattern.fill.reciprocal.data());
  // The dense path's singularity scale: n eps max |a_ij|.
  double scale2 = 0.0;
  const std::size_t nnz = pattern.lu.nonzeros();
  for (std::size_t i = 0; i < nnz; ++i) scale2 = std::max(scale2, detail::magnitude2(v[i]));
  const double tiny = static_cast<double>(pattern.lu.size()) *
                      std::numeric_limits<double>::epsilon() * std::sqrt(scale2);
  return pattern.lu.factor(tiny) == detail::PatternStatus::ok;
}

template <typename T>
std::size_t find_pattern(const std::vector<detail::Pattern<T>>& patterns,
                         const std::vector<std::size_t>& held) {
  for (std::size_t i = 0; i < patterns.size(); ++i) {
    if (patterns[i].held == held) return i;
  }
  return Network::npos;
}

// A dense matrix's values, row-major.
template <typename Matrix>
std::vector<typename Matrix::Scalar> row_major(const Matrix& a) {
  const auto n = static_cast<std::size_t>(a.rows());
  std::vector<typename Matrix::Scalar> out(n * n);
  for (std::size_t i = 0; i < n; ++i) {
    for (std::size_t j = 0; j < n; ++j) {
      out[i * n + j] = a(static_cast<Eigen::Index>(i), static_cast<Eigen::Index>(j));
    }
  }
  return out;
}

}  // namespace

bool Network::prepare_dc(const double* parameters, NetworkWorkspace& ws,
                         const std::vector<std::size_t>& held_outputs) const {
  const Layout& L = *layout_;
  auto& d = ws.data();
  mark_held(L, d, held_outputs);
  const std::size_t existing = find_pattern(d.dc_patterns, held_outputs);
  if (existing != npos) {
    d.dc_patterns.erase(d.dc_patterns.begin() + static_cast<std::ptrdiff_t>(existing));
  }
  d.dc_active = npos;
  if (L.size == 0 || check_values(parameters) != SolveStatus::ok) return false;
  fill_dense_dc(L, parameters, d, held_outputs);
  std::vector<std::pair<std::size_t, std::size_t>> positions;
  for (const auto& s : L.matrix) {
    if (!d.held_row[s.row] && stamp_present(s, false)) positions.emplace_back(s.row, s.col);
  }
  for (const std::size_t e : held_outputs) {
    const auto& o = L.opamps[L.opamp_of_element[e]];
    positions.emplace_back(o.branch, o.out);
  }
  detail::Pattern<double> pattern;
  pattern.held = held_outputs;
  if (!pattern.lu.analyse(L.size, positions, row_major(d.a))) return false;
  pattern.lu.reserve_columns(static_cast<std::size_t>(d.x.cols()));
  compile_fill(L, d.held_row.data(), held_outputs, false, pattern);
  d.dc_patterns.push_back(std::move(pattern));
  return true;
}

bool Network::prepare_ac(const double* parameters, double frequency, NetworkWorkspace& ws) const {
  const Layout& L = *layout_;
  auto& d = ws.data();
  d.ac_patterns.clear();
  d.ac_active = npos;
  if (L.size == 0 || check_values(parameters) != SolveStatus::ok) return false;
  fill_dense_ac(L, parameters, frequency, d);
  std::vector<std::pair<std::size_t, std::size_t>> positions;
  for (const auto& s : L.matrix) {
    if (stamp_present(s, true)) positions.emplace_back(s.row, s.col);
  }
  detail::Pattern<std::complex<double>> pattern;
  if (!pattern.lu.analyse(L.size, positions, row_major(d.ac))) return false;
  pattern.lu.reserve_columns(static_cast<std::size_t>(d.ac_x.cols()));
  compile_fill(L, nullptr, {}, true, pattern);
  d.ac_patterns.push_back(std::move(pattern));
  return true;
}

SolveStatus Network::factor_dc(const double* parameters, NetworkWorkspace& ws,
                               const std::vector<std::size_t>& held_outputs) const {
  auto& d = ws.data();
  mark_held(*layout_, d, held_outputs);
  d.dc_active = npos;
  const SolveStatus values = check_values(parameters);
  if (values != SolveStatus::ok) return values;
  if (layout_->size == 0) return SolveStatus::ok;
  const std::size_t i = find_pattern(d.dc_patterns, held_outputs);
  if (i != npos) {
    if (factor_pattern(d.dc_patterns[i], parameters, 0.0)) {
      d.dc_active = i;
      ++d.pattern_factors;
      return SolveStatus::ok;
    }
    ++d.dense_fallbacks;
  }
  fill_dense_dc(*layout_, parameters, d, held_outputs);
  d.lu.compute(d.a);
  return pivot_status(d.lu, d.a);
}

SolveStatus Network::factor_ac(const double* parameters, double frequency,
                               NetworkWorkspace& ws) const {
  auto& d = ws.data();
  d.ac_active = npos;
  const SolveStatus values = check_values(parameters);
  if (values != SolveStatus::ok) return values;
  d.frequency = frequency;
  if (layout_->size == 0) return SolveStatus::ok;
  if (!d.ac_patterns.empty()) {
    if (factor_pattern(d.ac_patterns[0], parameters, frequency)) {
      d.ac_active = 0;
      ++d.pattern_factors;
      return SolveStatus::ok;
    }
    ++d.dense_fallbacks;
  }
  fill_dense_ac(*layout_, parameters, frequency, d);
  d.ac_lu.compute(d.ac);
  return pivot_status(d.ac_lu, d.ac);
}

namespace {

// `held` marks the branch rows of held op-amp outputs (DC only; nullptr for none): their
// offset terms give way to the held level.
template <typename T>
void fill_rhs(const Network::Layout& L, const double* theta, const Excitation& ex, T* rhs,
              const unsigned char* held) {
  std::fill(rhs, rhs + L.size, T(0));
  detail::visit_rhs(
      L, ex, held,
      [&](std::size_t row, std::size_t p, double sign) { rhs[row] += sign * theta[p]; },
      [&](std::size_t row, double value) { rhs[row] += value; },
      [&](std::size_t row, double level) { rhs[row] = level; });
}

}  // namespace

const double* Network::solve_dc(const double* parameters, const Excitation& excitation,
                                NetworkWorkspace& ws, std::size_t slot) const {
  auto& d = ws.data();
  fill_rhs(*layout_, parameters, excitation, d.rhs.data(), d.held_row.data());
  auto column = d.x.col(static_cast<Eigen::Index>(slot));
  if (d.dc_active != npos) {
    d.dc_patterns[d.dc_active].lu.solve(d.rhs.data(), column.data());
  } else if (layout_->size > 0) {
    column.noalias() = d.lu.solve(d.rhs);
  }
  return column.data();
}

const std::complex<double>* Network::solve_ac(const double* parameters,
                                              const Excitation& excitation, NetworkWorkspace& ws,
                                              std::size_t slot) const {
  auto& d = ws.data();
  fill_rhs(*layout_, parameters, excitation, d.ac_rhs.data(), nullptr);
  auto column = d.ac_x.col(static_cast<Eigen::Index>(slot));
  if (d.ac_active != npos) {
    d.ac_patterns[d.ac_active].lu.solve(d.ac_rhs.data(), column.data());
  } else if (layout_->size > 0) {
    column.noalias() = d.ac_lu.solve(d.ac_rhs);
  }
  return column.data();
}

namespace {

// Every excitation of an analysis, solved in one pass over the factors: the reused
// pattern's when the last factorisation used it, else the dense one's.
template <typename Pattern, typename DenseLu, typename Block>
void solve_excitations(const Network::Layout& L, const double* theta, const Excitation* excitations,
                       std::size_t count, const unsigned char* held,
                       std::vector<Pattern>& patterns, std::size_t active, const DenseLu& lu,
                       Block& rhs, Block& x, const char* what) {
  if (count > static_cast<std::size_t>(x.cols())) {
    throw Error(std::string(what) + ": " + std::to_string(count) + " excitations but room for " +
                std::to_string(x.cols()));
  }
  for (std::size_t e = 0; e < count; ++e) {
    fill_rhs(L, theta, excitations[e], rhs.col(static_cast<Eigen::Index>(e)).data(), held);
  }
  const auto n = static_cast<std::size_t>(L.size);
  if (active != Network::npos) {
    patterns[active].lu.solve_block(rhs.data(), n, x.data(), n, count);
  } else if (n > 0) {
    const auto c = static_cast<Eigen::Index>(count);
    x.leftCols(c).noalias() = lu.solve(rhs.leftCols(c));
  }
}

}  // namespace

void Network::solve_dc(const double* parameters, const Excitation* excitations, std::size_t count,
                       NetworkWorkspace& ws) const {
  auto& d = ws.data();
  solve_excitations(*layout_, parameters, excitations, count, d.held_row.data(), d.dc_patterns,
                    d.dc_active, d.lu, d.rhs_block, d.x, "solve_dc");
}

void Network::solve_ac(const double* parameters, const Excitation* excitations, std::size_t count,
                       NetworkWorkspace& ws) const {
  auto& d = ws.data();
  solve_excitations(*layout_, parameters, excitations, count, nullptr, d.ac_patterns, d.ac_active,
                    d.ac_lu, d.ac_rhs_block, d.ac_x, "solve_ac");
}

std::string Network::diagnose_singular(const double* parameters, double frequency,
                                      const std::vector<std::size_t>& held_outputs) const {
  std::ostringstream out;
  const SolveStatus values = check_values(parameters);
  if (values != SolveStatus::ok) {
    const auto& params = layout_->circuit.parameters();
    for (std::size_t i = 0; i < params.size(); ++i) {
      const double v = parameters[i];
      if (!std::isfinite(v) || (params[i].positive && !(v > 0.0))) {
        out << "parameter '" << params[i].name << "' has the value " << v
            << ", outside its physical range";
        return out.str();
      }
    }
    for (const auto& o : layout_->opamps) {
      const OutputLimits l = limits_of(o, parameters);
      if (!(l.high > l.low)) {
        out << "op-amp '" << layout_->circuit.elements()[o.element].name
            << "' has a high output limit of " << l.high << " V, not above its low limit of "
            << l.low << " V";
        return out.str();
      }
    }
  }
  auto ws = make_workspace();
  Eigen::MatrixXcd a;
  if (frequency == 0.0) {
    factor_dc(parameters, ws, held_outputs);
    a = ws.data().a.cast<std::complex<double>>();
  } else {
    factor_ac(parameters, frequency, ws);
    a = ws.data().ac;
  }
  Eigen::FullPivLU<Eigen::MatrixXcd> full(a);
  full.setThreshold(static_cast<double>(a.rows()) * std::numeric_limits<double>::epsilon() * 4);
  const Eigen::MatrixXcd kernel = full.kernel();
  out << "the circuit equations are singular";
  if (frequency != 0.0) out << " at " << frequency << " Hz";
  if (!held_outputs.empty()) {
    out << " with the output of";
    for (std::size_t i = 0; i < held_outputs.size(); ++i) {
      out << (i ? ", " : " ") << "'" << layout_->circuit.elements()[held_outputs[i]].name << "'";
    }
    out << " held at a limit";
  }
  if (kernel.cols() > 0 && kernel.norm() > 0) {
    const Eigen::VectorXcd v = kernel.col(0);
    const double biggest = v.cwiseAbs().maxCoeff();
    out << ": nothing fixes ";
    bool first = true;
    for (Eigen::Index i = 0; i < v.size(); ++i) {
      if (std::abs(v(i)) < 0.1 * biggest) continue;
      out << (first ? "" : ", ") << layout_->unknown_names[static_cast<std::size_t>(i)];
      first = false;
    }
  }
  out << ". Common causes: an op-amp with no negative feedback path asked for a linear "
         "measurement, a current source with no other path for its current, or a "
         "controlled source that cancels a branch";
  return out.str();
}

std::vector<double> Network::operating_point(const std::vector<double>& parameters) const {
  if (parameters.size() != layout_->circuit.parameters().size()) {
    throw Error("operating_point: expected " +
                std::to_string(layout_->circuit.parameters().size()) + " parameter values, got " +
                std::to_string(parameters.size()));
  }
  auto ws = make_workspace();
  if (factor_dc(parameters.data(), ws) != SolveStatus::ok) {
    throw CircuitError(diagnose_singular(parameters.data(), 0.0));
  }
  const double* x = solve_dc(parameters.data(), Excitation{}, ws);
  return std::vector<double>(x, x + layout_->nodes);
}

std::complex<double> Network::transfer(const std::vector<double>& parameters,
                                       const std::string& source, const std::string& out_plus,
                                       const std::string& out_minus, double frequency) const {
  if (parameters.size() != layout_->circuit.parameters().size()) {
    throw Error("transfer: expected " + std::to_string(layout_->circuit.parameters().size()) +
                " parameter values, got " + std::to_string(parameters.size()));
  }
  const std::size_t src = layout_->circuit.find_element(source);
  if (src == Circuit::npos) throw DesignError("transfer: no element called '" + source + "'");
  const auto kind = layout_->circuit.elements()[src].kind;
  if (kind != ElementKind::voltage_source && kind != ElementKind::current_source) {
    throw DesignError("transfer: '" + source + "' is not an independent source");
  }
  for (const auto* node : {&out_plus, &out_minus}) {
    if (!layout_->circuit.has_node(*node)) {
      throw DesignError("transfer: no node called '" + *node + "'");
    }
  }
  Excitation ex;
  ex.sources_at_value = false;
  ex.opamp_errors = false;
  ex.overrides = {{src, 1.0}};
  const std::size_t p = layout_->node(out_plus);
  const std::size_t m = layout_->node(out_minus);
  auto ws = make_workspace();
  if (frequency == 0.0) {
    if (factor_dc(parameters.data(), ws) != SolveStatus::ok) {
      throw CircuitError(diagnose_singular(parameters.data(), 0.0));
    }
    const double* x = solve_dc(parameters.data(), ex, ws);
    return (p == npos ? 0.0 : x[p]) - (m == npos ? 0.0 : x[m]);
  }
  if (factor_ac(parameters.data(), frequency, ws) != SolveStatus::ok) {
    throw CircuitError(diagnose_singular(parameters.data(), frequency));
  }
  const std::complex<double>* x = solve_ac(parameters.data(), ex, ws);
  return (p == npos ? 0.0 : x[p]) - (m == npos ? 0.0 : x[m]);
}

}  // namespace lotwise
