// lotwise's TOML design-file schema. Every error names FILE:LINE:COLUMN and the key,
// part or section at fault; docs/design-file.md documents the schema.
#define TOML_HEADER_ONLY 1
#define TOML_EXCEPTIONS 1
#include "lotwise/design_file.hpp"

#include <algorithm>
#include <fstream>
#include <initializer_list>
#include <map>
#include <optional>
#include <sstream>

#include <toml++/toml.h>

#include "lotwise/error.hpp"
#include "lotwise/units.hpp"
#include "study/plan.hpp"
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
}

#define LOTWISE_OPAMP_KEYS "model", "open_loop_gain", "gain_bandwidth", "offset", \
                           "bias_current", "bias_plus", "bias_minus"

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
      r.only(t, {"type", "value", "nodes"}, where);
      const auto nodes = r.node_list(r.need(t, "nodes", &node, where), 2, where + ": nodes");
      const double value = r.number(r.need(t, "value", &node, where), where + ": value");
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

Distribution distribution(const Reader& r, const toml::node& n, const std::string& where) {
  const std::string s = r.text(n, where + ": distribution");
  if (s == "normal") return Distribution::normal;
  if (s == "uniform") return Distribution::uniform;
  r.fail(&n, where + ": unknown distribution '" + s + "' (normal, uniform)");
}

MeasurementKind measurement_kind(const Reader& r, const toml::node& n, const std::string& where) {
  const std::string s = r.text(n, where + ": kind");
  for (auto k : {MeasurementKind::gain, MeasurementKind::differential_gain,
                 MeasurementKind::common_mode_gain, MeasurementKind::cmrr,
                 MeasurementKind::output_offset, MeasurementKind::input_offset,
                 MeasurementKind::node_voltage, MeasurementKind::bandwidth}) {
    if (s == to_string(k)) return k;
  }
  r.fail(&n, where + ": unknown measurement kind '" + s +
                 "' (gain, differential_gain, common_mode_gain, cmrr, output_offset, "
                 "input_offset, node_voltage, bandwidth)");
}

Design read(const toml::table& root, const Reader& r) {
  r.only(root, {"title", "ground", "opamp_grades", "parts", "vary", "measurements", "specs", "run"},
         "the top level");
  std::string ground = "gnd";
  if (const auto* n = root.get("ground")) ground = r.text(*n, "ground");
  Design design{"", Circuit(ground), {}, {}, {}, {}};
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
      const toml::table& t = *item.as_table();
      r.only(t, {"parameters", "tolerance", "distribution", "sigmas"}, where);
      Variation v;
      v.targets = r.names(r.need(t, "parameters", &item, where), where + ": parameters");
      const Quantity tol = r.quantity(r.need(t, "tolerance", &item, where), where + ": tolerance");
      v.tolerance = tol.value;
      v.relative = tol.relative;
      if (const auto* d = t.get("distribution")) v.distribution = distribution(r, *d, where);
      if (const auto* s = t.get("sigmas")) {
        if (v.distribution != Distribution::normal) r.fail(s, where + ": sigmas applies to the normal distribution only");
        v.sigmas = r.number(*s, where + ": sigmas");
      }
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

  std::vector<const toml::node*> measurement_nodes;
  if (const auto* n = root.get("measurements")) {
    for (const auto& [name, value] : in_file_order(r.table(n, "[measurements]"))) {
      const std::string where = "measurement '" + name + "'";
      const toml::table& t = r.table(value, where);
      r.only(t, {"kind", "inputs", "output", "frequency"}, where);
      Measurement m;
      m.name = name;
      m.kind = measurement_kind(r, r.need(t, "kind", value, where), where);
      if (const auto* i = t.get("inputs")) m.inputs = r.names(*i, where + ": inputs");
      m.output = r.names(r.need(t, "output", value, where), where + ": output");
      if (const auto* f = t.get("frequency")) m.frequency = r.number(*f, where + ": frequency");
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

  if (const auto* n = root.get("run")) {
    const toml::table& t = r.table(n, "[run]");
    r.only(t, {"samples", "seed", "threads"}, "[run]");
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
