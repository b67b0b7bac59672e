// lotwise's TOML design-file schema. Every error names FILE:LINE:COLUMN and the key,
// part or section at fault; docs/design-file.md documents the schema.
#define TOML_HEADER_ONLY 1
#define TOML_EXCEPTIONS 1
#include "lotwise/design_file.hpp"

#include <algorithm>
#include <fstream>
#include <initializer_list>
#include <limits>
#include <map>
#include <optional>
#include <sstream>

#include <toml++/toml.h>

#include "lotwise/error.hpp"
#include "lotwise/preferred_values.hpp"
#include "lotwise/units.hpp"
#include "study/plan.hpp"
#include "variation/model.hpp"
#include "variation/sampler.hpp"

namespace lotwise {
namespace {

class Reader {
 public:
  explicit Reader(std::string source) : source_(std::move(source)) {}

  [[noreturn]] void fail(const toml::node* node, const std::string& what) const {
    std::ostringstream out;
    out << source_;
    if (node && node->source().begin.line > 0) {
      out << ":" << node->source().begin.line << ":" << node->source().begin.column;
    }
    out << ": " << what;
    throw DesignError(out.str());
  }

  // Rejects keys other than `allowed`, naming the first unknown one.
  void only(const toml::table& table, std::initializer_list<const char*> allowed,
            const std::string& where) const {
    for (const auto& [key, value] : table) {
      bool ok = false;
      for (const char* a : allowed) ok = ok || key.str() == a;
      if (ok) continue;
      std::string list;
      for (const char* a : allowed) list += (list.empty() ? "" : ", ") + std::string(a);
      fail(&value, "unknown key '" + std::string(key.str()) + "' in " + where +
                       " (allowed: " + list + ")");
    }
  }

  const toml::table& table(const toml::node* node, const std::string& where) const {
    if (!node || !node->is_table()) fail(node, where + " must be a table");
    return *node->as_table();
  }

  const toml::node& need(const toml::table& t, const char* key, const toml::node* owner,
                         const std::string& where) const {
    const toml::node* n = t.get(key);
    if (!n) fail(owner, where + " needs the key '" + std::string(key) + "'");
    return *n;
  }

  std::string text(const toml::node& n, const std::string& what) const {
    if (!n.is_string()) fail(&n, what + " must be a string");
    return n.as_string()->get();
  }

  // A number given as a TOML number or as engineering text ("4.99k").
  double number(const toml::node& n, const std::string& what) const {
    if (n.is_integer()) return static_cast<double>(n.as_integer()->get());
    if (n.is_floating_point()) {
      const double v = n.as_floating_point()->get();
      if (!std::isfinite(v)) fail(&n, what + " must be a finite number");
      return v;
    }
    if (n.is_string()) {
      try {
        return parse_value(n.as_string()->get());
      } catch (const DesignError& e) {
        fail(&n, what + ": " + e.what());
      }
    }
    fail(&n, what + " must be a number or a text such as \"4.99k\"");
  }

  Quantity quantity(const toml::node& n, const std::string& what) const {
    if (n.is_string()) {
      try {
        return parse_quantity(n.as_string()->get());
      } catch (const DesignError& e) {
        fail(&n, what + ": " + e.what());
      }
    }
    return {number(n, what), false};
  }

  std::uint64_t count(const toml::node& n, const std::string& what, bool allow_zero) const {
    if (!n.is_integer() || n.as_integer()->get() < (allow_zero ? 0 : 1)) {
      fail(&n, what + (allow_zero ? " must be a whole number >= 0" : " must be a whole number >= 1"));
    }
    return static_cast<std::uint64_t>(n.as_integer()->get());
  }

  // A string or an array of strings.
  std::vector<std::string> names(const toml::node& n, const std::string& what) const {
    if (n.is_string()) return {n.as_string()->get()};
    if (!n.is_array()) fail(&n, what + " must be a name or an array of names");
    std::vector<std::string> out;
    for (const auto& item : *n.as_array()) out.push_back(text(item, what + " entries"));
    return out;
  }

  std::vector<std::string> node_list(const toml::node& n, std::size_t count,
                                     const std::string& what) const {
    auto list = names(n, what);
    if (list.size() != count) {
      fail(&n, what + " must list exactly " + std::to_string(count) + " node names");
    }
    return list;
  }

 private:
  std::string source_;
};

// The entries of a table in the order they stand in the file (toml++ keeps them sorted
// by key), so parts and measurements keep the order the engineer wrote.
std::vector<std::pair<std::string, const toml::node*>> in_file_order(const toml::table& t) {
  std::vector<std::pair<std::string, const toml::node*>> entries;
  for (const auto& [key, value] : t) entries.emplace_back(std::string(key.str()), &value);
  std::stable_sort(entries.begin(), entries.end(), [](const auto& a, const auto& b) {
    const auto& pa = a.second->source().begin;
    const auto& pb = b.second->source().begin;
    return pa.line != pb.line ? pa.line < pb.line : pa.column < pb.column;
  });
  return entries;
}

OpAmpModel opamp_model(const Reader& r, const toml::node& n, const std::string& where) {
  const std::string s = r.text(n, where + ": model");
  if (s == "ideal") return OpAmpModel::ideal;
  if (s == "finite_gain") return OpAmpModel::finite_gain;
  if (s == "single_pole") return OpAmpModel::single_pole;
  r.fail(&n, where + ": unknown op-amp model '" + s + "' (ideal, finite_gain, single_pole)");
}

// Fills op-amp data from a table's keys that are present.
void read_opamp_fields(const Reader& r, const toml::table& t, OpAmpSpec& spec,
                       const std::string& where) {
  if (const auto* n = t.get("model")) spec.model = opamp_model(r, *n, where);
  if (const auto* n = t.get("open_loop_gain")) spec.open_loop_gain = r.number(*n, where + ": open_loop_gain");
  if (const auto* n = t.get("gain_bandwidth")) spec.gain_bandwidth = r.number(*n, where + ": gain_bandwidth");
  if (const auto* n = t.get("offset")) spec.offset = r.number(*n, where + ": offset");
  if (const auto* n = t.get("bias_current")) {
    spec.bias_plus = spec.bias_minus = r.number(*n, where + ": bias_current");
  }
  if (const auto* n = t.get("bias_plus")) spec.bias_plus = r.number(*n, where + ": bias_plus");
  if (const auto* n = t.get("bias_minus")) spec.bias_minus = r.number(*n, where + ": bias_minus");
  // Output limits, per side: an explicit level, or a supply less headroom. A table that
  // gives one form replaces the other form taken from a grade.
  constexpr double inf = std::numeric_limits<double>::infinity();
  for (const bool high : {true, false}) {
    const std::string side = high ? "high" : "low";
    const toml::node* level = t.get("output_" + side);
    const toml::node* supply = t.get("supply_" + side);
    std::string headroom_key = "headroom_" + side;
    const toml::node* headroom = t.get(headroom_key);
    if (!headroom) {
      headroom_key = "headroom";
      headroom = t.get(headroom_key);
    }
    if (level && (supply || headroom)) {
      r.fail(level, where + ": give either output_" + side + " or supply_" + side +
                        " with headroom, not both");
    }
    double& spec_level = high ? spec.output_high : spec.output_low;
    double& spec_supply = high ? spec.supply_high : spec.supply_low;
    double& spec_headroom = high ? spec.headroom_high : spec.headroom_low;
    if (level) {
      spec_level = r.number(*level, where + ": output_" + side);
      spec_supply = high ? inf : -inf;
      spec_headroom = 0.0;
    }
    if (supply) {
      spec_supply = r.number(*supply, where + ": supply_" + side);
      spec_level = high ? inf : -inf;
    }
    if (headroom) {
      spec_headroom = r.number(*headroom, where + ": " + headroom_key);
      if (spec_headroom < 0.0) r.fail(headroom, where + ": " + headroom_key + " must be >= 0");
    }
  }
  if (t.get("headroom") && (t.get("headroom_high") || t.get("headroom_low"))) {
    r.fail(t.get("headroom"), where + ": give headroom (both sides) or headroom_high / "
                                      "headroom_low, not both");
  }
}

#define LOTWISE_OPAMP_KEYS "model", "open_loop_gain", "gain_bandwidth", "offset",            \
                           "bias_current", "bias_plus", "bias_minus", "supply_high",         \
                           "supply_low", "headroom", "headroom_high", "headroom_low",       \
                           "output_high", "output_low"

void check_series(const Reader& r, const toml::node& n, double value, const std::string& where);

void read_part(const Reader& r, const std::string& name, const toml::node& node,
               const std::map<std::string, OpAmpSpec>& grades, Circuit& circuit) {
  const std::string where = "part '" + name + "'";
  const toml::table& t = r.table(&node, where);
  const std::string type = r.text(r.need(t, "type", &node, where), where + ": type");
  // The circuit builder's own checks (value ranges, node names) carry no position.
  auto build = [&](auto&& add) {
    try {
      add();
    } catch (const DesignError& e) {
      r.fail(&node, where + ": " + e.what());
    }
  };
  {
    if (type == "resistor" || type == "capacitor" || type == "inductor" ||
        type == "voltage_source" || type == "current_source") {
      const bool passive = type == "resistor" || type == "capacitor" || type == "inductor";
      if (passive) {
        r.only(t, {"type", "value", "nodes", "series"}, where);
      } else {
        r.only(t, {"type", "value", "nodes"}, where);
      }
      const auto nodes = r.node_list(r.need(t, "nodes", &node, where), 2, where + ": nodes");
      const double value = r.number(r.need(t, "value", &node, where), where + ": value");
      if (const auto* n = t.get("series"); n && passive) check_series(r, *n, value, where);
      if (type == "resistor") build([&] { circuit.add_resistor(name, nodes[0], nodes[1], value); });
      else if (type == "capacitor") build([&] { circuit.add_capacitor(name, nodes[0], nodes[1], value); });
      else if (type == "inductor") build([&] { circuit.add_inductor(name, nodes[0], nodes[1], value); });
      else if (type == "voltage_source") build([&] { circuit.add_voltage_source(name, nodes[0], nodes[1], value); });
      else build([&] { circuit.add_current_source(name, nodes[0], nodes[1], value); });
    } else if (type == "vcvs" || type == "vccs") {
      r.only(t, {"type", "value", "nodes", "control"}, where);
      const auto nodes = r.node_list(r.need(t, "nodes", &node, where), 2, where + ": nodes");
      const auto control = r.node_list(r.need(t, "control", &node, where), 2, where + ": control");
      const double value = r.number(r.need(t, "value", &node, where), where + ": value");
      if (type == "vcvs") build([&] { circuit.add_vcvs(name, nodes[0], nodes[1], control[0], control[1], value); });
      else build([&] { circuit.add_vccs(name, nodes[0], nodes[1], control[0], control[1], value); });
    } else if (type == "ccvs" || type == "cccs") {
      r.only(t, {"type", "value", "nodes", "control"}, where);
      const auto nodes = r.node_list(r.need(t, "nodes", &node, where), 2, where + ": nodes");
      const std::string control = r.text(r.need(t, "control", &node, where), where + ": control");
      const double value = r.number(r.need(t, "value", &node, where), where + ": value");
      if (type == "ccvs") build([&] { circuit.add_ccvs(name, nodes[0], nodes[1], control, value); });
      else build([&] { circuit.add_cccs(name, nodes[0], nodes[1], control, value); });
    } else if (type == "opamp") {
      r.only(t, {"type", "grade", "plus", "minus", "output", LOTWISE_OPAMP_KEYS}, where);
      OpAmpSpec spec;
      if (const auto* g = t.get("grade")) {
        const std::string grade = r.text(*g, where + ": grade");
        const auto it = grades.find(grade);
        if (it == grades.end()) {
          std::string known;
          for (const auto& [k, v] : grades) known += (known.empty() ? "" : ", ") + k;
          r.fail(g, where + ": no op-amp grade called '" + grade + "'" +
                        (known.empty() ? std::string(" (the file defines none under [opamp_grades])")
                                       : " (grades: " + known + ")"));
        }
        spec = it->second;
      }
      read_opamp_fields(r, t, spec, where);
      const std::string plus = r.text(r.need(t, "plus", &node, where), where + ": plus");
      const std::string minus = r.text(r.need(t, "minus", &node, where), where + ": minus");
      const std::string output = r.text(r.need(t, "output", &node, where), where + ": output");
      build([&] { circuit.add_opamp(name, plus, minus, output, spec); });
    } else {
      r.fail(t.get("type"), where + ": unknown part type '" + type +
                                "' (resistor, capacitor, inductor, voltage_source, "
                                "current_source, vcvs, vccs, ccvs, cccs, opamp)");
    }
  }
}

Distribution distribution(const Reader& r, const toml::node& n, const std::string& where,
                          const char* key = "distribution") {
  const std::string s = r.text(n, where + ": " + key);
  std::string known;
  for (auto d : {Distribution::normal, Distribution::uniform, Distribution::truncated_normal,
                 Distribution::triangular, Distribution::log_normal, Distribution::binned,
                 Distribution::fixed}) {
    if (s == to_string(d)) return d;
    known += (known.empty() ? "" : ", ") + std::string(to_string(d));
  }
  r.fail(&n, where + ": unknown " + key + " '" + s + "' (" + known + ")");
}

// A tolerance: "1%", "50ppm", an IEC 60062 letter ("F" is 1 %), or an absolute amount.
Quantity tolerance_quantity(const Reader& r, const toml::node& n, const std::string& what) {
  if (n.is_string()) {
    const std::string& text = n.as_string()->get();
    if (text.size() == 1 && text[0] >= 'A' && text[0] <= 'Z') {
      try {
        return {tolerance_of_letter(text), true};
      } catch (const DesignError& e) {
        r.fail(&n, what + ": " + e.what());
      }
    }
  }
  return r.quantity(n, what);
}

// A temperature coefficient: "50ppm" or "50ppm/K" (relative per kelvin), "2u" or
// "2uV/K" (absolute per kelvin, in the parameter's unit).
Quantity per_kelvin(const Reader& r, const toml::node& n, const std::string& what) {
  if (n.is_string()) {
    std::string text = n.as_string()->get();
    for (const char* unit : {"/K", "/degC", "/\xC2\xB0" "C"}) {
      const std::string u(unit);
      if (text.size() > u.size() && text.compare(text.size() - u.size(), u.size(), u) == 0) {
        text.resize(text.size() - u.size());
        break;
      }
    }
    try {
      return parse_quantity(text);
    } catch (const DesignError& e) {
      r.fail(&n, what + ": " + e.what());
    }
  }
  return r.quantity(n, what);
}

// A part's value must belong to the preferred-value series it names.
void check_series(const Reader& r, const toml::node& n, double value, const std::string& where) {
  PreferredSeries series{};
  try {
    series = parse_series(r.text(n, where + ": series"));
  } catch (const DesignError& e) {
    r.fail(&n, where + ": " + e.what());
  }
  if (!(value > 0.0) || !is_preferred(value, series, 1e-6)) {
    r.fail(&n, where + ": value " + format_si(value, 4) + " is not an " + to_string(series) +
                   " value" + (value > 0.0 ? " (nearest: " +
                                   format_si(nearest_preferred(value, series), 4) + ")"
                                           : std::string()));
  }
}

bool normal_shaped(Distribution d) {
  return d == Distribution::normal || d == Distribution::truncated_normal ||
         d == Distribution::log_normal || d == Distribution::binned;
}

Variation read_variation(const Reader& r, const toml::node& item, const std::string& where) {
  const toml::table& t = *item.as_table();
  r.only(t, {"parameters", "tolerance", "distribution", "sigmas", "inner_tolerance",
             "lot_tolerance", "lot_distribution", "ratio_tolerance", "tempco",
             "tempco_tolerance", "tempco_distribution", "tempco_tracking"},
         where);
  Variation v;
  v.targets = r.names(r.need(t, "parameters", &item, where), where + ": parameters");
  if (const auto* d = t.get("distribution")) v.distribution = distribution(r, *d, where);
  const bool fixed = v.distribution == Distribution::fixed;
  // Relative or absolute is said once, by the first amount given; the others must agree.
  bool unit_known = false;
  auto amount = [&](const char* key, double& out) {
    const toml::node* n = t.get(key);
    if (!n) return;
    const Quantity q = tolerance_quantity(r, *n, where + ": " + key);
    if (unit_known && q.relative != v.relative) {
      r.fail(n, where + ": " + key + " must be " + (v.relative ? "relative (\"0.1%\", \"B\")" :
                                                              "absolute, like the tolerance"));
    }
    unit_known = true;
    v.relative = q.relative;
    out = q.value;
  };
  if (fixed) {
    if (const auto* n = t.get("tolerance")) {
      r.fail(n, where + ": a fixed parameter takes no tolerance (lot_tolerance and tempco "
                        "still apply)");
    }
  } else {
    r.need(t, "tolerance", &item, where);
  }
  amount("tolerance", v.tolerance);
  amount("inner_tolerance", v.inner_tolerance);
  amount("lot_tolerance", v.lot_tolerance);
  if (const auto* n = t.get("ratio_tolerance")) {
    const Quantity q = tolerance_quantity(r, *n, where + ": ratio_tolerance");
    if (!q.relative) r.fail(n, where + ": ratio_tolerance must be relative (\"0.01%\", \"L\")");
    v.ratio_tolerance = q.value;
  }
  if (const auto* d = t.get("lot_distribution")) {
    v.lot_distribution = distribution(r, *d, where, "lot_distribution");
  }
  bool coefficient_known = false;
  auto coefficient = [&](const char* key, double& out) {
    const toml::node* n = t.get(key);
    if (!n) return;
    const Quantity q = per_kelvin(r, *n, where + ": " + key);
    if (coefficient_known && q.relative != v.tempco_relative) {
      r.fail(n, where + ": " + key + " must be given like tempco (both relative, as \"ppm\", or "
                        "both absolute)");
    }
    coefficient_known = true;
    v.tempco_relative = q.relative;
    out = q.value;
  };
  coefficient("tempco", v.tempco);
  coefficient("tempco_tolerance", v.tempco_tolerance);
  coefficient("tempco_tracking", v.tempco_tracking);
  if (const auto* d = t.get("tempco_distribution")) {
    v.tempco_distribution = distribution(r, *d, where, "tempco_distribution");
  }
  if (const auto* s = t.get("sigmas")) {
    const bool used = normal_shaped(v.distribution) ||
                      (v.lot_tolerance > 0.0 && normal_shaped(v.lot_distribution)) ||
                      (v.tempco_tolerance > 0.0 && normal_shaped(v.tempco_distribution));
    if (!used) {
      r.fail(s, where + ": sigmas applies to the normal-shaped distributions only (normal, "
                        "truncated_normal, log_normal, binned, or a normal lot or tempco spread)");
    }
    v.sigmas = r.number(*s, where + ": sigmas");
  }
  return v;
}

MeasurementKind measurement_kind(const Reader& r, const toml::node& n, const std::string& where) {
  const std::string s = r.text(n, where + ": kind");
  std::string known;
  for (auto k : {MeasurementKind::gain, MeasurementKind::differential_gain,
                 MeasurementKind::common_mode_gain, MeasurementKind::cmrr,
                 MeasurementKind::output_offset, MeasurementKind::input_offset,
                 MeasurementKind::node_voltage, MeasurementKind::bandwidth,
                 MeasurementKind::phase, MeasurementKind::gain_error,
                 MeasurementKind::rising_threshold, MeasurementKind::falling_threshold,
                 MeasurementKind::hysteresis, MeasurementKind::threshold_centre,
                 MeasurementKind::output_high, MeasurementKind::output_low}) {
    if (s == to_string(k)) return k;
    known += (known.empty() ? "" : ", ") + std::string(to_string(k));
  }
  r.fail(&n, where + ": unknown measurement kind '" + s + "' (" + known + ")");
}

Design read(const toml::table& root, const Reader& r) {
  r.only(root, {"title", "ground", "opamp_grades", "parts", "vary", "correlate", "temperature",
                "measurements", "specs", "run", "sweep"},
         "the top level");
  std::string ground = "gnd";
  if (const auto* n = root.get("ground")) ground = r.text(*n, "ground");
  Design design;
  design.circuit = Circuit(ground);
  if (const auto* n = root.get("title")) design.title = r.text(*n, "title");

  std::map<std::string, OpAmpSpec> grades;
  if (const auto* n = root.get("opamp_grades")) {
    for (const auto& [key, value] : in_file_order(r.table(n, "[opamp_grades]"))) {
      const std::string where = "op-amp grade '" + key + "'";
      const toml::table& t = r.table(value, where);
      r.only(t, {LOTWISE_OPAMP_KEYS}, where);
      OpAmpSpec spec;
      read_opamp_fields(r, t, spec, where);
      grades[key] = spec;
    }
  }

  const toml::node* parts = root.get("parts");
  if (!parts) r.fail(nullptr, "the design has no [parts] section");
  for (const auto& [key, value] : in_file_order(r.table(parts, "[parts]"))) {
    read_part(r, key, *value, grades, design.circuit);
  }

  if (const auto* n = root.get("vary")) {
    if (!n->is_array_of_tables()) r.fail(n, "vary must be written as [[vary]] tables");
    std::size_t index = 0;
    std::map<std::size_t, std::size_t> spread_by;  // parameter -> [[vary]] number
    for (const auto& item : *n->as_array()) {
      const std::string where = "[[vary]] number " + std::to_string(++index);
      const Variation v = read_variation(r, item, where);
      std::vector<std::size_t> targets;
      try {
        targets = detail::resolve_targets(design.circuit, v);
      } catch (const DesignError& e) {
        r.fail(&item, where + ": " + e.what());
      }
      for (const std::size_t p : targets) {
        const auto it = spread_by.find(p);
        if (it != spread_by.end()) {
          r.fail(&item, "parameter '" + design.circuit.parameters()[p].name +
                            "' is spread by both [[vary]] number " + std::to_string(it->second) +
                            " and [[vary]] number " + std::to_string(index) +
                            "; give each parameter one variation");
        }
        spread_by[p] = index;
      }
      design.variations.push_back(v);
    }
  }

  if (const auto* n = root.get("temperature")) {
    const toml::table& t = r.table(n, "[temperature]");
    r.only(t, {"reference", "operating", "range"}, "[temperature]");
    Temperature& temp = design.temperature;
    if (const auto* v = t.get("reference")) temp.reference = r.number(*v, "[temperature] reference");
    if (const auto* v = t.get("operating")) {
      if (v->is_array()) {
        for (const auto& x : *v->as_array()) {
          temp.operating.push_back(r.number(x, "[temperature] operating"));
        }
        if (temp.operating.empty()) r.fail(v, "[temperature] operating lists no temperature");
      } else {
        temp.operating.push_back(r.number(*v, "[temperature] operating"));
      }
    }
    if (const auto* v = t.get("range")) {
      if (!v->is_array() || v->as_array()->size() != 2) {
        r.fail(v, "[temperature] range must be [low, high] in degrees Celsius");
      }
      temp.drawn = true;
      temp.low = r.number(*v->as_array()->get(0), "[temperature] range");
      temp.high = r.number(*v->as_array()->get(1), "[temperature] range");
    }
    try {
      detail::validate_temperature(temp);
    } catch (const DesignError& e) {
      r.fail(n, std::string("[temperature]: ") + e.what());
    }
  }

  if (const auto* n = root.get("correlate")) {
    if (!n->is_array_of_tables()) r.fail(n, "correlate must be written as [[correlate]] tables");
    std::size_t index = 0;
    for (const auto& item : *n->as_array()) {
      const std::string where = "[[correlate]] number " + std::to_string(++index);
      const toml::table& t = *item.as_table();
      r.only(t, {"parameters", "coefficient"}, where);
      Correlation c;
      c.parameters = r.names(r.need(t, "parameters", &item, where), where + ": parameters");
      const toml::node& k = r.need(t, "coefficient", &item, where);
      c.coefficient = r.number(k, where + ": coefficient");
      if (!(std::abs(c.coefficient) < 1.0)) {
        r.fail(&k, where + ": the coefficient must lie strictly between -1 and 1 (a perfect "
                           "correlation is a shared deviation: use lot_tolerance or a matched "
                           "network)");
      }
      // One correlation at a time first, so that its own faults point at it.
      try {
        detail::VariationModel(design.circuit, design.variations, {c}, design.temperature);
      } catch (const DesignError& e) {
        std::string what = e.what();
        const std::string own = "correlation 1: ";
        if (what.compare(0, own.size(), own) == 0) what.erase(0, own.size());
        r.fail(&item, where + ": " + what);
      }
      design.correlations.push_back(c);
    }
    // Conflicting pairs and a matrix that is not positive definite involve several.
    try {
      detail::VariationModel(design.circuit, design.variations, design.correlations,
                             design.temperature);
    } catch (const DesignError& e) {
      const std::string what = e.what();
      r.fail(n, what.find("by correlation") == std::string::npos
                    ? what
                    : what + " (correlations are numbered as the [[correlate]] tables stand "
                             "in the file)");
    }
  }

  std::vector<const toml::node*> measurement_nodes;
  if (const auto* n = root.get("measurements")) {
    for (const auto& [name, value] : in_file_order(r.table(n, "[measurements]"))) {
      const std::string where = "measurement '" + name + "'";
      const toml::table& t = r.table(value, where);
      r.only(t, {"kind", "inputs", "output", "frequency", "target", "opamp"}, where);
      Measurement m;
      m.name = name;
      m.kind = measurement_kind(r, r.need(t, "kind", value, where), where);
      if (const auto* i = t.get("inputs")) m.inputs = r.names(*i, where + ": inputs");
      // Trip points read the driving source (thresholds) or default to the op-amp's output.
      if (is_trip_point(m.kind)) {
        if (const auto* o = t.get("output")) m.output = r.names(*o, where + ": output");
      } else {
        m.output = r.names(r.need(t, "output", value, where), where + ": output");
      }
      if (const auto* f = t.get("frequency")) m.frequency = r.number(*f, where + ": frequency");
      if (const auto* g = t.get("target")) {
        m.target = r.number(*g, where + ": target");
        if (m.kind == MeasurementKind::gain_error && m.target == 0.0) {
          r.fail(g, where + ": target must not be 0 (the gain error is relative to it)");
        }
      } else if (m.kind == MeasurementKind::gain_error) {
        r.fail(value, where + " needs the key 'target' (the intended gain)");
      }
      if (const auto* o = t.get("opamp")) m.opamp = r.text(*o, where + ": opamp");
      try {
        detail::validate_measurement(design.circuit, m);
      } catch (const DesignError& e) {
        r.fail(value, e.what());
      }
      design.measurements.push_back(m);
    }
  }

  if (const auto* n = root.get("specs")) {
    for (const auto& [name, value] : in_file_order(r.table(n, "[specs]"))) {
      const std::string where = "spec '" + name + "'";
      const toml::table& t = r.table(value, where);
      r.only(t, {"min", "max"}, where);
      Spec spec;
      spec.measurement = name;
      if (const auto* v = t.get("min")) spec.min = r.number(*v, where + ": min");
      if (const auto* v = t.get("max")) spec.max = r.number(*v, where + ": max");
      try {
        detail::validate_spec(design.measurements, spec);
      } catch (const DesignError& e) {
        r.fail(value, e.what());
      }
      design.specs.push_back(spec);
    }
  }

  if (const auto* n = root.get("sweep")) {
    // [[sweep]] axes for `lotwise sweep`: nominal = "R2" or tolerance = "R*", values = [...]
    if (!n->is_array_of_tables()) r.fail(n, "sweep must be written as [[sweep]] tables");
    std::size_t index = 0;
    for (const auto& item : *n->as_array()) {
      const std::string where = "[[sweep]] " + std::to_string(++index);
      const toml::table& t = r.table(&item, where);
      r.only(t, {"nominal", "tolerance", "values"}, where);
      ParameterSweepAxis axis;
      const toml::node* nominal = t.get("nominal");
      const toml::node* tolerance = t.get("tolerance");
      if ((nominal == nullptr) == (tolerance == nullptr)) {
        r.fail(&item, where + ": give either nominal = \"PARAMETER\" or tolerance = \"PARAMETER\"");
      }
      axis.setting = nominal ? SweepSetting::nominal : SweepSetting::tolerance;
      axis.parameter = r.text(nominal ? *nominal : *tolerance, where + ": parameter");
      try {
        detail::resolve_names(design.circuit, {axis.parameter});
      } catch (const DesignError& e) {
        r.fail(nominal ? nominal : tolerance, where + ": " + e.what());
      }
      const toml::node& values = r.need(t, "values", &item, where);
      if (!values.is_array() || values.as_array()->empty()) {
        r.fail(&values, where + ": values must be a non-empty array, e.g. [\"10k\", \"20k\"]");
      }
      for (const auto& v : *values.as_array()) {
        axis.values.push_back(r.quantity(v, where + ": values").value);
      }
      design.sweep.push_back(axis);
    }
    if (design.sweep.size() > 2) r.fail(n, "at most two [[sweep]] axes");
  }

  if (const auto* n = root.get("run")) {
    const toml::table& t = r.table(n, "[run]");
    r.only(t, {"samples", "seed", "threads", "sampler", "replicates", "confidence",
               "target_half_width", "tolerance_digits", "builds_per_lot"}, "[run]");
    if (const auto* v = t.get("builds_per_lot")) {
      // Builds made from one reel of parts: they share its lot deviations.
      design.run.builds_per_lot = r.count(*v, "[run] builds_per_lot", false);
    }
    if (const auto* v = t.get("tolerance_digits")) {
      // Significant digits of each measurement's standard deviation the run must settle
      // (JCGM 101:2008, 7.9).
      const std::uint64_t digits = r.count(*v, "[run] tolerance_digits", false);
      if (digits > 3) r.fail(v, "[run] tolerance_digits must be 1, 2 or 3");
      design.run.tolerance_digits = static_cast<std::uint32_t>(digits);
    }
    if (const auto* v = t.get("confidence")) {
      // "95%" or 0.95
      const double c = r.quantity(*v, "[run] confidence").value;
      if (!(c >= 0.5 && c < 1.0)) r.fail(v, "[run] confidence must lie in [0.5, 1), e.g. 0.95 or \"95%\"");
      design.run.confidence = c;
    }
    if (const auto* v = t.get("target_half_width")) {
      // "0.5%" or 0.005: the half-width of the yield's interval at which the run stops
      const double h = r.quantity(*v, "[run] target_half_width").value;
      if (!(h > 0.0 && h < 0.5)) r.fail(v, "[run] target_half_width must lie in (0, 0.5), e.g. \"0.5%\"");
      design.run.target_half_width = h;
    }
    if (const auto* v = t.get("sampler")) {
      const std::string word = r.text(*v, "[run] sampler");
      bool known = false;
      for (auto k : {Sampler::monte_carlo, Sampler::sobol, Sampler::latin_hypercube}) {
        if (word == to_string(k)) {
          design.run.sampler = k;
          known = true;
        }
      }
      if (!known) {
        r.fail(v, "[run] sampler: unknown sampler '" + word +
                      "' (monte_carlo, sobol, latin_hypercube)");
      }
    }
    if (const auto* v = t.get("replicates")) {
      const std::uint64_t count = r.count(*v, "[run] replicates", false);
      if (count > 65536) r.fail(v, "[run] replicates must be at most 65536");
      design.run.replicates = static_cast<std::uint32_t>(count);
    }
    if (const auto* v = t.get("samples")) design.run.samples = r.count(*v, "[run] samples", false);
    if (const auto* v = t.get("seed")) design.run.seed = r.count(*v, "[run] seed", true);
    if (const auto* v = t.get("threads")) {
      design.run.threads = static_cast<unsigned>(r.count(*v, "[run] threads", true));
    }
  }
  return design;
}

}  // namespace

Design parse_design(const std::string& text, const std::string& source_name) {
  const Reader reader(source_name);
  toml::table root;
  try {
    root = toml::parse(text, source_name);
  } catch (const toml::parse_error& e) {
    std::ostringstream out;
    out << source_name << ":" << e.source().begin.line << ":" << e.source().begin.column
        << ": not valid TOML: " << e.description();
    throw DesignError(out.str());
  }
  return read(root, reader);
}

Design load_design(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw DesignError(path + ": cannot open the design file");
  std::ostringstream buffer;
  buffer << in.rdbuf();
  if (in.bad()) throw DesignError(path + ": cannot read the design file");
  return parse_design(buffer.str(), path);
}

}  // namespace lotwise
