#include "dsp/circuit.hpp"

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <limits>
#include <numbers>
#include <numeric>
#include <queue>
#include <sstream>

namespace tb::dsp {

namespace {

constexpr std::size_t kNone = std::numeric_limits<std::size_t>::max();

// The start is found from backward-Euler steps this much shorter than dt (and twice that):
// short enough that nothing moves noticeably, long enough that C / h keeps the matrix's
// dynamic range moderate (1 F at dt = 1 us gives 1e9 S).
constexpr double kStartStepFraction = 1e-3;

std::string quoted(std::string_view text) {
  return "'" + std::string(text) + "'";
}

std::string_view kind_word(ElementKind kind) {
  switch (kind) {
    case ElementKind::resistor:
      return "resistor";
    case ElementKind::inductor:
      return "inductor";
    case ElementKind::capacitor:
      return "capacitor";
    case ElementKind::voltage_source:
      return "voltage source";
  }
  return "element";
}

std::string_view unit_word(ElementKind kind) {
  switch (kind) {
    case ElementKind::resistor:
      return "ohm";
    case ElementKind::inductor:
      return "henry";
    case ElementKind::capacitor:
      return "farad";
    case ElementKind::voltage_source:
      return "volt";
  }
  return "";
}

std::string number(double value) {
  std::ostringstream out;
  out.precision(6);
  out << value;
  return out.str();
}

// Disjoint sets over node indices.
class NodeSets {
 public:
  explicit NodeSets(std::size_t n) : parent_(n) { std::iota(parent_.begin(), parent_.end(), 0); }
  std::size_t find(std::size_t a) {
    while (parent_[a] != a) {
      parent_[a] = parent_[parent_[a]];
      a = parent_[a];
    }
    return a;
  }
  void join(std::size_t a, std::size_t b) { parent_[find(a)] = find(b); }

 private:
  std::vector<std::size_t> parent_;
};

std::string join_names(const std::vector<std::string>& names) {
  std::string text;
  for (std::size_t i = 0; i < names.size(); ++i) {
    if (i > 0) text += i + 1 == names.size() ? " and " : ", ";
    text += quoted(names[i]);
  }
  return text;
}

void check_element(const Element& e) {
  const std::string who = std::string(kind_word(e.kind)) + " " + quoted(e.name);
  if (e.node_p.empty() || e.node_n.empty()) {
    throw CircuitError("circuit.bad_node", who + " has an empty node name",
                       "Name both terminals; ground is the node \"0\"");
  }
  if (e.kind == ElementKind::voltage_source) {
    if (!std::isfinite(e.value)) {
      throw CircuitError("circuit.bad_value", who + " has a non-finite value",
                         "Give its DC value in volt (0 for a pure AC or sample-driven source)");
    }
    if (e.node_p == e.node_n) {
      throw CircuitError("circuit.source_loop",
                         who + " has both terminals on node " + quoted(e.node_p),
                         "Connect it between two different nodes");
    }
  } else {
    if (!(std::isfinite(e.value) && e.value > 0.0)) {
      throw CircuitError(
          "circuit.bad_value", who + " has value " + number(e.value),
          "Give a finite value above zero in " + std::string(unit_word(e.kind)) +
              (e.kind == ElementKind::resistor ? "; leave an open out, join a short's nodes"
                                               : "; leave it out if it is not there"));
    }
    if (e.node_p == e.node_n) {
      throw CircuitError("circuit.shorted_element",
                         who + " has both terminals on node " + quoted(e.node_p),
                         "Connect it between two different nodes, or leave it out");
    }
  }
  if (!std::isfinite(e.initial_voltage_v) ||
      (e.kind != ElementKind::capacitor && e.initial_voltage_v != 0.0)) {
    throw CircuitError("circuit.bad_value",
                       who + " has initial voltage " + number(e.initial_voltage_v),
                       "Only a capacitor takes an initial voltage, and it must be finite");
  }
  if (!std::isfinite(e.saturation_current_a) || e.saturation_current_a < 0.0 ||
      (e.kind != ElementKind::inductor && e.saturation_current_a != 0.0)) {
    throw CircuitError("circuit.bad_value",
                       who + " has saturation current " + number(e.saturation_current_a),
                       "Only an inductor takes a saturation current: finite and above zero, "
                       "or 0 for a linear core");
  }
}

// MNA unknowns: node voltages of nodes 1..N-1 at rows 0..N-2, then one current per voltage
// source. Ground (node 0) has no row.
std::size_t row_of(std::size_t node) {
  return node == 0 ? kNone : node - 1;
}

// Assembles the MNA matrix with element admittances from `admittance` (not called for
// sources). Scalar is double or std::complex<double>.
template <class Scalar, class Admittance>
Eigen::Matrix<Scalar, Eigen::Dynamic, Eigen::Dynamic> assemble(const Circuit& circuit,
                                                               Admittance admittance) {
  const std::size_t nodes = circuit.node_count() - 1;
  const auto unknowns = static_cast<Eigen::Index>(nodes + circuit.source_count());
  Eigen::Matrix<Scalar, Eigen::Dynamic, Eigen::Dynamic> a =
      Eigen::Matrix<Scalar, Eigen::Dynamic, Eigen::Dynamic>::Zero(unknowns, unknowns);
  const auto& elements = circuit.elements();
  for (std::size_t e = 0; e < elements.size(); ++e) {
    if (elements[e].kind == ElementKind::voltage_source) continue;
    const Scalar y = admittance(elements[e]);
    const std::size_t p = row_of(circuit.node_p(e));
    const std::size_t n = row_of(circuit.node_n(e));
    const auto ip = static_cast<Eigen::Index>(p);
    const auto in = static_cast<Eigen::Index>(n);
    if (p != kNone) a(ip, ip) += y;
    if (n != kNone) a(in, in) += y;
    if (p != kNone && n != kNone) {
      a(ip, in) -= y;
      a(in, ip) -= y;
    }
  }
  for (std::size_t k = 0; k < circuit.source_count(); ++k) {
    const std::size_t e = circuit.source_element(k);
    const auto row = static_cast<Eigen::Index>(nodes + k);
    // Branch current flows p -> n through the source: it leaves node p's KCL, enters n's.
    if (const std::size_t p = row_of(circuit.node_p(e)); p != kNone) {
      a(static_cast<Eigen::Index>(p), row) = Scalar(1);
      a(row, static_cast<Eigen::Index>(p)) = Scalar(1);
    }
    if (const std::size_t n = row_of(circuit.node_n(e)); n != kNone) {
      a(static_cast<Eigen::Index>(n), row) = Scalar(-1);
      a(row, static_cast<Eigen::Index>(n)) = Scalar(-1);
    }
  }
  return a;
}

template <class Derived>
void require_finite(const Eigen::MatrixBase<Derived>& m, const std::string& what) {
  if (!m.allFinite()) {
    throw CircuitError("circuit.singular",
                       "The circuit's equations have no unique solution " + what,
                       "Look for an ideal series L-C resonance with nothing else on its middle "
                       "node, or values many orders of magnitude apart");
  }
}

// lu.solve() for a right-hand side that may have no columns (a circuit without sources or
// without reactive elements), which Eigen's triangular solver does not accept.
Eigen::MatrixXd solve_columns(const Eigen::PartialPivLU<Eigen::MatrixXd>& lu,
                              const Eigen::MatrixXd& rhs) {
  if (rhs.cols() == 0) return Eigen::MatrixXd(rhs.rows(), 0);
  return lu.solve(rhs);
}

// Solves a small dense system in place (Gaussian elimination, partial pivoting). n is the
// number of saturating inductors, usually 1 or 2.
void solve_small(std::vector<double>& a, std::vector<double>& b, std::size_t n) {
  for (std::size_t col = 0; col < n; ++col) {
    std::size_t pivot = col;
    for (std::size_t r = col + 1; r < n; ++r) {
      if (std::abs(a[r * n + col]) > std::abs(a[pivot * n + col])) pivot = r;
    }
    if (pivot != col) {
      for (std::size_t c = 0; c < n; ++c)
        std::swap(a[col * n + c], a[pivot * n + c]);
      std::swap(b[col], b[pivot]);
    }
    const double d = a[col * n + col];
    for (std::size_t r = col + 1; r < n; ++r) {
      const double f = a[r * n + col] / d;
      for (std::size_t c = col; c < n; ++c)
        a[r * n + c] -= f * a[col * n + c];
      b[r] -= f * b[col];
    }
  }
  for (std::size_t r = n; r-- > 0;) {
    double s = b[r];
    for (std::size_t c = r + 1; c < n; ++c)
      s -= a[r * n + c] * b[c];
    b[r] = s / a[r * n + r];
  }
}

}  // namespace

// ---------------------------------------------------------------------------------------
// Circuit

Circuit::Circuit(Netlist netlist) : netlist_(std::move(netlist)) {
  const auto& elements = netlist_.elements;
  if (elements.empty()) {
    throw CircuitError("circuit.empty", "The netlist has no elements",
                       "Add the source, the jig and the part");
  }

  for (std::size_t e = 0; e < elements.size(); ++e) {
    const Element& el = elements[e];
    if (el.name.empty()) {
      throw CircuitError("circuit.bad_name",
                         "Element " + std::to_string(e + 1) + " (a " +
                             std::string(kind_word(el.kind)) + ") has no name",
                         "Give every element a unique name such as \"R1\" or \"Cpart\"");
    }
    check_element(el);
    if (!element_lookup_.emplace(el.name, e).second) {
      throw CircuitError("circuit.duplicate_name", "Two elements are named " + quoted(el.name),
                         "Rename one: element names must be unique");
    }
  }

  node_names_.push_back("0");
  node_lookup_.emplace("0", 0);
  auto number_node = [this](const std::string& name) {
    const auto [it, added] = node_lookup_.emplace(name, node_names_.size());
    if (added) node_names_.push_back(name);
    return it->second;
  };
  for (std::size_t e = 0; e < elements.size(); ++e) {
    const std::size_t p = number_node(elements[e].node_p);
    const std::size_t n = number_node(elements[e].node_n);
    terminals_.emplace_back(p, n);
    if (elements[e].kind == ElementKind::voltage_source) sources_.push_back(e);
  }

  const bool touches_ground = std::any_of(terminals_.begin(), terminals_.end(),
                                          [](auto t) { return t.first == 0 || t.second == 0; });
  if (!touches_ground) {
    throw CircuitError("circuit.no_ground", "No element is connected to node \"0\" (ground)",
                       "Connect the circuit's reference to the node named exactly \"0\"");
  }

  // Loops of voltage sources alone: their sum of voltages would have to be zero and the
  // loop current is undetermined either way.
  {
    NodeSets sets(node_count());
    std::vector<std::vector<std::pair<std::size_t, std::size_t>>> adjacent(node_count());
    for (std::size_t e : sources_) {
      const auto [p, n] = terminals_[e];
      if (sets.find(p) == sets.find(n)) {
        // Name the sources on the path that this one closes.
        std::vector<std::size_t> via(node_count(), kNone);
        std::vector<char> seen(node_count(), 0);
        std::queue<std::size_t> todo;
        todo.push(p);
        seen[p] = 1;
        while (!todo.empty()) {
          const std::size_t at = todo.front();
          todo.pop();
          for (const auto& [next, element] : adjacent[at]) {
            if (seen[next]) continue;
            seen[next] = 1;
            via[next] = element;
            todo.push(next);
          }
        }
        std::vector<std::string> loop{elements[e].name};
        for (std::size_t at = n; at != p && via[at] != kNone;) {
          const std::size_t element = via[at];
          loop.push_back(elements[element].name);
          at = terminals_[element].first == at ? terminals_[element].second
                                               : terminals_[element].first;
        }
        throw CircuitError("circuit.source_loop",
                           "Voltage sources " + join_names(loop) + " form a loop",
                           "Put a resistance in series with one of them (a real source has "
                           "an output resistance), or leave one out");
      }
      sets.join(p, n);
      adjacent[p].emplace_back(n, e);
      adjacent[n].emplace_back(p, e);
    }
  }

  // DC paths: resistors, inductors and sources conduct at DC, capacitors do not.
  {
    NodeSets dc(node_count());
    for (std::size_t e = 0; e < elements.size(); ++e) {
      if (elements[e].kind != ElementKind::capacitor) {
        dc.join(terminals_[e].first, terminals_[e].second);
      }
    }
    const std::size_t ground = dc.find(0);
    for (std::size_t node = 1; node < node_count(); ++node) {
      const std::size_t group = dc.find(node);
      if (group == ground) continue;
      std::vector<std::string> nodes, capacitors;
      for (std::size_t other = 1; other < node_count(); ++other) {
        if (dc.find(other) == group) nodes.push_back(node_names_[other]);
      }
      for (std::size_t e = 0; e < elements.size(); ++e) {
        const bool in_p = dc.find(terminals_[e].first) == group;
        const bool in_n = dc.find(terminals_[e].second) == group;
        if (in_p != in_n) capacitors.push_back(elements[e].name);  // only capacitors can be
      }
      const std::string subject = (nodes.size() == 1 ? "Node " : "Nodes ") + join_names(nodes) +
                                  (nodes.size() == 1 ? " has" : " have") + " no DC path to ground";
      const std::string detail =
          capacitors.empty()
              ? " (nothing connects " + std::string(nodes.size() == 1 ? "it" : "them") +
                    " to the rest of the circuit)"
              : " (only capacitor" + std::string(capacitors.size() == 1 ? " " : "s ") +
                    join_names(capacitors) + " connect" + (capacitors.size() == 1 ? "s" : "") +
                    " " + (nodes.size() == 1 ? "it" : "them") + ", so the DC voltage is undefined)";
      throw CircuitError("circuit.floating_node", subject + detail,
                         "Add a resistor from " + quoted(nodes.front()) +
                             " to ground or to a node that has a DC path (a real part's "
                             "leakage, or a bleeder such as 10 Mohm)");
    }
  }
}

std::size_t Circuit::node_index(std::string_view name) const {
  const auto it = node_lookup_.find(name);
  if (it == node_lookup_.end()) {
    throw CircuitError("circuit.unknown_node", "The circuit has no node " + quoted(name),
                       "Use a node name that appears in the netlist (ground is \"0\")");
  }
  return it->second;
}

std::size_t Circuit::element_index(std::string_view name) const {
  const auto it = element_lookup_.find(name);
  if (it == element_lookup_.end()) {
    throw CircuitError("circuit.unknown_element", "The circuit has no element " + quoted(name),
                       "Use an element name that appears in the netlist");
  }
  return it->second;
}

std::vector<std::complex<double>> Circuit::solve_ac(
    double freq_hz, const std::vector<std::complex<double>>& source_phasors) const {
  using cplx = std::complex<double>;
  if (!(std::isfinite(freq_hz) && freq_hz > 0.0)) {
    throw std::invalid_argument("solve_ac: frequency must be finite and above 0 Hz, got " +
                                number(freq_hz));
  }
  if (source_phasors.size() != source_count()) {
    throw std::invalid_argument("solve_ac: " + std::to_string(source_phasors.size()) +
                                " source phasors for " + std::to_string(source_count()) +
                                " voltage sources");
  }
  const double omega = 2.0 * std::numbers::pi * freq_hz;
  const auto a = assemble<cplx>(*this, [omega](const Element& e) -> cplx {
    switch (e.kind) {
      case ElementKind::resistor:
        return 1.0 / e.value;
      case ElementKind::capacitor:
        return {0.0, omega * e.value};
      case ElementKind::inductor:
        return 1.0 / cplx{0.0, omega * e.value};  // small-signal L
      case ElementKind::voltage_source:
        break;
    }
    return 0.0;
  });
  const std::size_t nodes = node_count() - 1;
  Eigen::VectorXcd rhs = Eigen::VectorXcd::Zero(a.rows());
  for (std::size_t k = 0; k < source_count(); ++k)
    rhs(static_cast<Eigen::Index>(nodes + k)) = source_phasors[k];
  const Eigen::VectorXcd x = a.partialPivLu().solve(rhs);
  require_finite(x, "at " + number(freq_hz) + " Hz");
  std::vector<cplx> v(node_count());
  for (std::size_t node = 1; node < node_count(); ++node)
    v[node] = x(static_cast<Eigen::Index>(node - 1));
  return v;
}

// ---------------------------------------------------------------------------------------
// TransientSolver

TransientSolver::TransientSolver(const Circuit& circuit, double sample_rate_hz, int oversample)
    : circuit_(circuit), sample_rate_hz_(sample_rate_hz), oversample_(oversample) {
  if (!(std::isfinite(sample_rate_hz) && sample_rate_hz > 0.0)) {
    throw std::invalid_argument("TransientSolver: sample rate must be finite and above 0, got " +
                                number(sample_rate_hz));
  }
  if (oversample < 1 || oversample > 4096) {
    throw std::invalid_argument("TransientSolver: oversample must be 1 to 4096, got " +
                                std::to_string(oversample));
  }
  dt_ = 1.0 / (sample_rate_hz * oversample);
  const auto& elements = circuit_.elements();
  const std::size_t nodes = circuit_.node_count() - 1;
  sources_ = circuit_.source_count();
  unknowns_ = nodes + sources_;

  role_.assign(elements.size(), kNone);
  for (std::size_t e = 0; e < elements.size(); ++e) {
    const Element& el = elements[e];
    if (el.kind == ElementKind::capacitor || el.kind == ElementKind::inductor) {
      role_[e] = r_element_.size();
      r_element_.push_back(e);
      const bool cap = el.kind == ElementKind::capacitor;
      r_is_cap_.push_back(cap ? 1 : 0);
      // Trapezoidal companions: i(n+1) = G v(n+1) + b with
      //   capacitor G = 2C/dt, b = -(G v(n) + i(n));  inductor G = dt/(2L), b = i(n) + G v(n).
      r_g_.push_back(cap ? 2.0 * el.value / dt_ : dt_ / (2.0 * el.value));
      r_row_p_.push_back(row_of(circuit_.node_p(e)));
      r_row_n_.push_back(row_of(circuit_.node_n(e)));
      const double isat = el.saturation_current_a;
      r_isat2_.push_back(!cap && isat > 0.0 ? 1.0 / (isat * isat) : 0.0);
      if (!cap && isat > 0.0) sat_.push_back(r_element_.size() - 1);
    }
  }
  reactive_ = r_element_.size();
  for (std::size_t k = 0; k < sources_; ++k)
    role_[circuit_.source_element(k)] = k;

  const auto u_rows = static_cast<Eigen::Index>(unknowns_);
  const auto r_cols = static_cast<Eigen::Index>(reactive_);
  const auto s_cols = static_cast<Eigen::Index>(sources_);
  // Incidence of the reactive elements (columns c_k = e_p - e_n) and of the source rows.
  Eigen::MatrixXd c = Eigen::MatrixXd::Zero(u_rows, r_cols);
  for (std::size_t k = 0; k < reactive_; ++k) {
    const std::size_t e = r_element_[k];
    if (const std::size_t p = row_of(circuit_.node_p(e)); p != kNone)
      c(static_cast<Eigen::Index>(p), static_cast<Eigen::Index>(k)) = 1.0;
    if (const std::size_t n = row_of(circuit_.node_n(e)); n != kNone)
      c(static_cast<Eigen::Index>(n), static_cast<Eigen::Index>(k)) = -1.0;
  }
  Eigen::MatrixXd src_rows = Eigen::MatrixXd::Zero(u_rows, s_cols);
  for (std::size_t k = 0; k < sources_; ++k)
    src_rows(static_cast<Eigen::Index>(nodes + k), static_cast<Eigen::Index>(k)) = 1.0;

  // The stepping matrix, factorised once. With history sources b (one per reactive element,
  // flowing p -> n inside it) and source values E the unknowns are
  //   x = A^-1 (-C b + S E),  voltages across the reactive elements v = C^T x.
  {
    const auto a = assemble<double>(circuit_, [this](const Element& e) {
      switch (e.kind) {
        case ElementKind::resistor:
          return 1.0 / e.value;
        case ElementKind::capacitor:
          return 2.0 * e.value / dt_;
        case ElementKind::inductor:
          return dt_ / (2.0 * e.value);
        case ElementKind::voltage_source:
          break;
      }
      return 0.0;
    });
    const Eigen::PartialPivLU<Eigen::MatrixXd> lu(a);
    const Eigen::MatrixXd ainv_c = solve_columns(lu, c);
    const Eigen::MatrixXd ainv_s = solve_columns(lu, src_rows);
    require_finite(ainv_c, "in the time domain");
    require_finite(ainv_s, "in the time domain");
    const Eigen::MatrixXd z = c.transpose() * ainv_c;
    const Eigen::MatrixXd zs = c.transpose() * ainv_s;
    const std::size_t width = reactive_ + sources_;
    w_.assign(reactive_ * width, 0.0);
    for (std::size_t k = 0; k < reactive_; ++k) {
      for (std::size_t j = 0; j < reactive_; ++j)
        w_[k * width + j] = -z(static_cast<Eigen::Index>(k), static_cast<Eigen::Index>(j));
      for (std::size_t s = 0; s < sources_; ++s)
        w_[k * width + reactive_ + s] =
            zs(static_cast<Eigen::Index>(k), static_cast<Eigen::Index>(s));
    }
    out_.assign(unknowns_ * width, 0.0);
    for (std::size_t r = 0; r < unknowns_; ++r) {
      for (std::size_t j = 0; j < reactive_; ++j)
        out_[r * width + j] = -ainv_c(static_cast<Eigen::Index>(r), static_cast<Eigen::Index>(j));
      for (std::size_t s = 0; s < sources_; ++s)
        out_[r * width + reactive_ + s] =
            ainv_s(static_cast<Eigen::Index>(r), static_cast<Eigen::Index>(s));
    }
    const std::size_t m = sat_.size();
    z_sat_.assign(reactive_ * m, 0.0);
    out_sat_.assign(unknowns_ * m, 0.0);
    for (std::size_t j = 0; j < m; ++j) {
      const auto col = static_cast<Eigen::Index>(sat_[j]);
      for (std::size_t k = 0; k < reactive_; ++k)
        z_sat_[k * m + j] = z(static_cast<Eigen::Index>(k), col);
      for (std::size_t r = 0; r < unknowns_; ++r)
        out_sat_[r * m + j] = ainv_c(static_cast<Eigen::Index>(r), col);
    }
  }

  // Linear circuits: the whole sample period in one affine map. Written with the history
  // sources alone, one internal step is b(j) = P b(j-1) + Q E(j), because
  //   capacitor b(j) = -(G v(j) + i(j)) = -b(j-1) - 2G v(j),
  //   inductor  b(j) = i(j) + G v(j)    =  b(j-1) + 2G v(j),
  // with v(j) = W [b(j-1); E(j)]. Oversample steps compose to
  //   b(os) = Phi b(0) + sum_j Gamma_j E(j),  x(os) = Psi b(0) + sum_j Lambda_j E(j),
  // the same arithmetic as stepping (up to rounding). With the sources linear in j,
  // E(j) = (1 - j/os) E_prev + (j/os) E_next, the sums collapse to two terms and a sample
  // costs the same whatever the oversampling.
  if (sat_.empty()) {
    const std::size_t width = reactive_ + sources_;
    Eigen::MatrixXd w_b(r_cols, r_cols), w_e(r_cols, s_cols);
    for (std::size_t k = 0; k < reactive_; ++k) {
      for (std::size_t j = 0; j < width; ++j) {
        const double value = w_[k * width + j];
        if (j < reactive_) {
          w_b(static_cast<Eigen::Index>(k), static_cast<Eigen::Index>(j)) = value;
        } else {
          w_e(static_cast<Eigen::Index>(k), static_cast<Eigen::Index>(j - reactive_)) = value;
        }
      }
    }
    Eigen::MatrixXd o_b(u_rows, r_cols), o_e(u_rows, s_cols);
    for (std::size_t r = 0; r < unknowns_; ++r) {
      for (std::size_t j = 0; j < width; ++j) {
        const double value = out_[r * width + j];
        if (j < reactive_) {
          o_b(static_cast<Eigen::Index>(r), static_cast<Eigen::Index>(j)) = value;
        } else {
          o_e(static_cast<Eigen::Index>(r), static_cast<Eigen::Index>(j - reactive_)) = value;
        }
      }
    }
    Eigen::VectorXd sigma(r_cols), gamma(r_cols);
    for (std::size_t k = 0; k < reactive_; ++k) {
      sigma(static_cast<Eigen::Index>(k)) = r_is_cap_[k] ? -1.0 : 1.0;
      gamma(static_cast<Eigen::Index>(k)) = r_is_cap_[k] ? -2.0 * r_g_[k] : 2.0 * r_g_[k];
    }
    const Eigen::MatrixXd p = Eigen::MatrixXd(sigma.asDiagonal()) + gamma.asDiagonal() * w_b;
    const Eigen::MatrixXd q = gamma.asDiagonal() * w_e;
    // Source values at internal step j (1 .. os) enter through Gamma_j = P^(os-j) Q into
    // b(os) and through Lambda_j = O_b P^(os-1-j) Q (j < os), Lambda_os = O_e into x(os),
    // where v(j) and x(j) = O_b b(j-1) + O_e E(j). Built from m = os - j = 0 upwards.
    const std::size_t os = static_cast<std::size_t>(oversample_);
    const std::size_t fine_w = reactive_ + os * sources_;
    const std::size_t lin_w = reactive_ + 2 * sources_;
    fine_b_.assign(reactive_ * fine_w, 0.0);
    fine_x_.assign(unknowns_ * fine_w, 0.0);
    Eigen::MatrixXd gamma0 = Eigen::MatrixXd::Zero(r_cols, s_cols);   // linear interpolation:
    Eigen::MatrixXd gamma1 = Eigen::MatrixXd::Zero(r_cols, s_cols);   // E(j) = (1 - j/os)
    Eigen::MatrixXd lambda0 = Eigen::MatrixXd::Zero(u_rows, s_cols);  //   E_prev + (j/os) E_next
    Eigen::MatrixXd lambda1 = Eigen::MatrixXd::Zero(u_rows, s_cols);
    Eigen::MatrixXd p_m = Eigen::MatrixXd::Identity(r_cols, r_cols);  // P^m
    Eigen::MatrixXd p_m_before = p_m;                                 // P^(m-1)
    Eigen::MatrixXd t = q;                                            // P^m Q
    Eigen::MatrixXd t_before;                                         // P^(m-1) Q
    for (std::size_t m = 0; m < os; ++m) {
      const std::size_t j = os - m;
      const double frac = static_cast<double>(j) / static_cast<double>(os);
      const Eigen::MatrixXd lambda = m == 0 ? o_e : Eigen::MatrixXd(o_b * t_before);
      gamma0 += (1.0 - frac) * t;
      gamma1 += frac * t;
      lambda0 += (1.0 - frac) * lambda;
      lambda1 += frac * lambda;
      const std::size_t col0 = reactive_ + (j - 1) * sources_;
      for (std::size_t s = 0; s < sources_; ++s) {
        const auto ss = static_cast<Eigen::Index>(s);
        for (std::size_t k = 0; k < reactive_; ++k)
          fine_b_[k * fine_w + col0 + s] = t(static_cast<Eigen::Index>(k), ss);
        for (std::size_t r = 0; r < unknowns_; ++r)
          fine_x_[r * fine_w + col0 + s] = lambda(static_cast<Eigen::Index>(r), ss);
      }
      t_before = t;
      t = (p * t).eval();
      p_m_before = p_m;
      p_m = (p * p_m).eval();
    }
    const Eigen::MatrixXd& phi = p_m;              // P^os
    const Eigen::MatrixXd psi = o_b * p_m_before;  // O_b P^(os-1)
    require_finite(phi, "over a sample period");
    require_finite(psi, "over a sample period");
    fast_b_.assign(reactive_ * lin_w, 0.0);
    fast_x_.assign(unknowns_ * lin_w, 0.0);
    auto pack = [&](std::vector<double>& lin, std::vector<double>& fine, std::size_t rows,
                    const Eigen::MatrixXd& m0, const Eigen::MatrixXd& m1,
                    const Eigen::MatrixXd& m2) {
      for (std::size_t r = 0; r < rows; ++r) {
        const auto rr = static_cast<Eigen::Index>(r);
        for (std::size_t k = 0; k < reactive_; ++k) {
          lin[r * lin_w + k] = m0(rr, static_cast<Eigen::Index>(k));
          fine[r * fine_w + k] = m0(rr, static_cast<Eigen::Index>(k));
        }
        for (std::size_t s = 0; s < sources_; ++s) {
          lin[r * lin_w + reactive_ + s] = m1(rr, static_cast<Eigen::Index>(s));
          lin[r * lin_w + reactive_ + sources_ + s] = m2(rr, static_cast<Eigen::Index>(s));
        }
      }
    };
    pack(fast_b_, fine_b_, reactive_, phi, gamma0, gamma1);
    pack(fast_x_, fine_x_, unknowns_, psi, lambda0, lambda1);
  }

  // The start: a backward-Euler step of length h from the initial state fixes the node
  // voltages and capacitor currents that go with it, to first order in h. Backward-Euler
  // companions: capacitor G = C/h, i = G (v - V0); inductor G = h/L, i = 0 + G v.
  // Two such steps (h and 2h) extrapolated to h = 0 leave an error of order (h/tau)^2.
  // Everything is linear in [1, E0]: column 0 is the part from the capacitors' charge,
  // column 1 + s the part per volt of source s.
  {
    const Eigen::Index cols = 1 + s_cols;
    auto start_at = [&](double h, Eigen::MatrixXd& x, Eigen::MatrixXd& v, Eigen::MatrixXd& i) {
      const auto a = assemble<double>(circuit_, [h](const Element& e) {
        switch (e.kind) {
          case ElementKind::resistor:
            return 1.0 / e.value;
          case ElementKind::capacitor:
            return e.value / h;
          case ElementKind::inductor:
            return h / e.value;
          case ElementKind::voltage_source:
            break;
        }
        return 0.0;
      });
      Eigen::MatrixXd rhs = Eigen::MatrixXd::Zero(u_rows, cols);
      rhs.rightCols(s_cols) = src_rows;
      for (std::size_t k = 0; k < reactive_; ++k) {
        const Element& el = elements[r_element_[k]];
        if (r_is_cap_[k])
          rhs.col(0) += (el.value / h) * el.initial_voltage_v * c.col(static_cast<Eigen::Index>(k));
      }
      x = Eigen::PartialPivLU<Eigen::MatrixXd>(a).solve(rhs);
      require_finite(x, "at the start");
      v = c.transpose() * x;
      i = Eigen::MatrixXd::Zero(r_cols, cols);
      for (std::size_t k = 0; k < reactive_; ++k) {
        const auto kk = static_cast<Eigen::Index>(k);
        const Element& el = elements[r_element_[k]];
        if (!r_is_cap_[k]) continue;  // inductors start without current
        // The capacitor keeps its initial voltage; its current is what the step drew.
        v(kk, 0) -= el.initial_voltage_v;
        i.row(kk) = (el.value / h) * v.row(kk);
        v.row(kk).setZero();
        v(kk, 0) = el.initial_voltage_v;
      }
    };
    const double h = kStartStepFraction * dt_;
    Eigen::MatrixXd x1, v1, i1, x2, v2, i2;
    start_at(h, x1, v1, i1);
    start_at(2 * h, x2, v2, i2);
    auto store = [cols](std::vector<double>& dst, const Eigen::MatrixXd& m) {
      dst.assign(static_cast<std::size_t>(m.rows() * cols), 0.0);
      for (Eigen::Index r = 0; r < m.rows(); ++r)
        for (Eigen::Index col = 0; col < cols; ++col)
          dst[static_cast<std::size_t>(r * cols + col)] = m(r, col);
    };
    store(start_x_, 2 * x1 - x2);
    store(start_v_, 2 * v1 - v2);
    store(start_i_, 2 * i1 - i2);
  }

  u_.assign(reactive_ + std::max<std::size_t>(2, static_cast<std::size_t>(oversample_)) * sources_,
            0.0);
  v0_.assign(reactive_, 0.0);
  dv_.assign(sat_.size(), 0.0);
  g_step_.assign(reactive_, 0.0);
  sat_mat_.assign(sat_.size() * sat_.size(), 0.0);
  sat_rhs_.assign(sat_.size(), 0.0);
  reset();
}

void TransientSolver::check_sources(std::span<const double> values, const char* what) const {
  if (values.size() != sources_) {
    throw std::invalid_argument(std::string(what) + ": " + std::to_string(values.size()) +
                                " source values for " + std::to_string(sources_) +
                                " voltage sources");
  }
  for (std::size_t k = 0; k < values.size(); ++k) {
    if (!std::isfinite(values[k])) {
      throw std::invalid_argument(std::string(what) + ": value of source " +
                                  quoted(circuit_.elements()[circuit_.source_element(k)].name) +
                                  " is not finite");
    }
  }
}

void TransientSolver::reset() {
  std::vector<double> values(sources_);
  for (std::size_t k = 0; k < sources_; ++k)
    values[k] = circuit_.elements()[circuit_.source_element(k)].value;
  reset(values);
}

void TransientSolver::reset(std::span<const double> source_values_at_t0) {
  check_sources(source_values_at_t0, "TransientSolver::reset");
  src_.assign(source_values_at_t0.begin(), source_values_at_t0.end());
  // Start values = column 0 + sum over sources of column 1 + s times the source value.
  const std::size_t cols = 1 + sources_;
  auto start_value = [&](const std::vector<double>& table, std::size_t row) {
    const double* t = table.data() + row * cols;
    double sum = t[0];
    for (std::size_t s = 0; s < sources_; ++s)
      sum += t[1 + s] * src_[s];
    return sum;
  };
  x_.assign(unknowns_, 0.0);
  for (std::size_t r = 0; r < unknowns_; ++r)
    x_[r] = start_value(start_x_, r);
  v_.assign(reactive_, 0.0);
  i_.assign(reactive_, 0.0);
  for (std::size_t k = 0; k < reactive_; ++k) {
    v_[k] = start_value(start_v_, k);
    i_[k] = start_value(start_i_, k);
  }
  i_prev_ = i_;  // no extrapolation on the first step
  samples_ = 0;
}

void TransientSolver::step(std::span<const double> source_values_at_next_sample) {
  check_sources(source_values_at_next_sample, "TransientSolver::step");
  if (sat_.empty()) {
    step_linear(source_values_at_next_sample, {});
  } else {
    step_general(source_values_at_next_sample, {});
  }
}

void TransientSolver::step_oversampled(std::span<const double> values) {
  const std::size_t os = static_cast<std::size_t>(oversample_);
  if (values.size() != os * sources_) {
    throw std::invalid_argument(
        "TransientSolver::step_oversampled: " + std::to_string(values.size()) + " values for " +
        std::to_string(os) + " internal steps x " + std::to_string(sources_) + " voltage sources");
  }
  for (std::size_t j = 0; j + 1 < os; ++j)
    check_sources(values.subspan(j * sources_, sources_), "TransientSolver::step_oversampled");
  const auto next = values.subspan((os - 1) * sources_, sources_);
  check_sources(next, "TransientSolver::step_oversampled");
  if (sat_.empty()) {
    step_linear(next, values);
  } else {
    step_general(next, values);
  }
}

void TransientSolver::step_linear(std::span<const double> next, std::span<const double> fine) {
  const std::size_t nr = reactive_;
  const std::size_t ns = sources_;
  double* const u = u_.data();
  double* const b = v0_.data();
  const double* const g = r_g_.data();
  const char* const is_cap = r_is_cap_.data();
  // u = [history sources at the period's start | source values the map takes].
  for (std::size_t k = 0; k < nr; ++k)
    u[k] = is_cap[k] ? -(g[k] * v_[k] + i_[k]) : i_[k] + g[k] * v_[k];
  std::size_t width = 0;
  const double* map_b = nullptr;
  const double* map_x = nullptr;
  if (fine.empty()) {
    for (std::size_t s = 0; s < ns; ++s) {
      u[nr + s] = src_[s];
      u[nr + ns + s] = next[s];
    }
    width = nr + 2 * ns;
    map_b = fast_b_.data();
    map_x = fast_x_.data();
  } else {
    std::copy(fine.begin(), fine.end(), u + nr);
    width = nr + fine.size();
    map_b = fine_b_.data();
    map_x = fine_x_.data();
  }
  for (std::size_t k = 0; k < nr; ++k) {
    const double* row = map_b + k * width;
    double sum = 0.0;
    for (std::size_t j = 0; j < width; ++j)
      sum += row[j] * u[j];
    b[k] = sum;
  }
  for (std::size_t r = 0; r < unknowns_; ++r) {
    const double* row = map_x + r * width;
    double sum = 0.0;
    for (std::size_t j = 0; j < width; ++j)
      sum += row[j] * u[j];
    x_[r] = sum;
  }
  // Back from the history sources to voltage and current: v from the node voltages, then
  //   capacitor b = -(G v + i),  inductor b = i + G v.
  for (std::size_t k = 0; k < nr; ++k) {
    const std::size_t p = r_row_p_[k];
    const std::size_t n = r_row_n_[k];
    const double v = (p == kNone ? 0.0 : x_[p]) - (n == kNone ? 0.0 : x_[n]);
    v_[k] = v;
    i_[k] = is_cap[k] ? -b[k] - g[k] * v : b[k] - g[k] * v;
  }
  i_prev_ = i_;
  std::copy(next.begin(), next.end(), src_.begin());
  ++samples_;
}

void TransientSolver::step_general(std::span<const double> next, std::span<const double> fine) {
  const std::size_t nr = reactive_;
  const std::size_t ns = sources_;
  const std::size_t width = nr + ns;
  const std::size_t nm = sat_.size();
  double* const u = u_.data();
  double* const v_new = v0_.data();
  double* const v = v_.data();
  double* const i = i_.data();
  double* const i_prev = i_prev_.data();
  double* const g_step = g_step_.data();
  double* const dv = dv_.data();
  const double* const g = r_g_.data();
  const double* const isat2 = r_isat2_.data();
  const char* const is_cap = r_is_cap_.data();
  const double* const w = w_.data();
  const double inv_os = 1.0 / oversample_;

  for (int sub = 1; sub <= oversample_; ++sub) {
    // Sources at the end of this internal step: given, or linear between the two samples.
    if (!fine.empty()) {
      const std::size_t row = static_cast<std::size_t>(sub - 1) * ns;
      for (std::size_t s = 0; s < ns; ++s)
        u[nr + s] = fine[row + s];
    } else if (sub == oversample_) {
      for (std::size_t s = 0; s < ns; ++s)
        u[nr + s] = next[s];
    } else {
      const double frac = sub * inv_os;
      for (std::size_t s = 0; s < ns; ++s)
        u[nr + s] = src_[s] + (next[s] - src_[s]) * frac;
    }
    // Companion conductances for this step. A saturating inductor's follows its current,
    // taken at the step's midpoint as extrapolated from the last two steps, which keeps the
    // lag of the nonlinearity second order in dt.
    for (std::size_t k = 0; k < nr; ++k) {
      if (isat2[k] > 0.0) {
        const double i_mid = 1.5 * i[k] - 0.5 * i_prev[k];
        g_step[k] = g[k] * (1.0 + i_mid * i_mid * isat2[k]);
      } else {
        g_step[k] = g[k];
      }
    }
    // History sources.
    for (std::size_t k = 0; k < nr; ++k)
      u[k] = is_cap[k] ? -(g[k] * v[k] + i[k]) : i[k] + g_step[k] * v[k];
    // Voltages across the reactive elements with the small-signal matrix.
    for (std::size_t k = 0; k < nr; ++k) {
      const double* row = w + k * width;
      double sum = 0.0;
      for (std::size_t j = 0; j < width; ++j)
        sum += row[j] * u[j];
      v_new[k] = sum;
    }
    // The extra conductance d_m of each saturating inductor m carries an extra current
    // d_m v_m, which changes every voltage by -Z[:, m] d_m v_m. On the saturating ones:
    //   (I + Z_MM diag(d)) v_M = v0_M.
    for (std::size_t a = 0; a < nm; ++a)
      dv[a] = g_step[sat_[a]] - g[sat_[a]];  // d_a for now
    if (nm == 1) {
      const std::size_t k0 = sat_[0];
      dv[0] *= v_new[k0] / (1.0 + z_sat_[k0] * dv[0]);
    } else {
      for (std::size_t a = 0; a < nm; ++a) {
        for (std::size_t b = 0; b < nm; ++b)
          sat_mat_[a * nm + b] = (a == b ? 1.0 : 0.0) + z_sat_[sat_[a] * nm + b] * dv[b];
        sat_rhs_[a] = v_new[sat_[a]];
      }
      solve_small(sat_mat_, sat_rhs_, nm);
      for (std::size_t a = 0; a < nm; ++a)
        dv[a] *= sat_rhs_[a];
    }
    for (std::size_t k = 0; k < nr; ++k) {
      double sum = 0.0;
      for (std::size_t a = 0; a < nm; ++a)
        sum += z_sat_[k * nm + a] * dv[a];
      v_new[k] -= sum;
    }
    // Companion updates.
    for (std::size_t k = 0; k < nr; ++k) {
      i_prev[k] = i[k];
      if (is_cap[k]) {
        i[k] = g[k] * (v_new[k] - v[k]) - i[k];
      } else {
        i[k] += g_step[k] * (v_new[k] + v[k]);
      }
      v[k] = v_new[k];
    }
  }

  // Node voltages and source currents at the new sample, from the last step's sources.
  for (std::size_t r = 0; r < unknowns_; ++r) {
    const double* row = out_.data() + r * width;
    double sum = 0.0;
    for (std::size_t j = 0; j < width; ++j)
      sum += row[j] * u[j];
    for (std::size_t a = 0; a < nm; ++a)
      sum -= out_sat_[r * nm + a] * dv[a];
    x_[r] = sum;
  }
  std::copy(next.begin(), next.end(), src_.begin());
  ++samples_;
}

double TransientSolver::voltage(std::size_t node) const {
  if (node >= circuit_.node_count()) {
    throw std::out_of_range("TransientSolver::voltage: node " + std::to_string(node) + " of " +
                            std::to_string(circuit_.node_count()));
  }
  return node == 0 ? 0.0 : x_[node - 1];
}

double TransientSolver::current(std::size_t element) const {
  const auto& elements = circuit_.elements();
  if (element >= elements.size()) {
    throw std::out_of_range("TransientSolver::current: element " + std::to_string(element) +
                            " of " + std::to_string(elements.size()));
  }
  const Element& el = elements[element];
  switch (el.kind) {
    case ElementKind::resistor:
      return (voltage(circuit_.node_p(element)) - voltage(circuit_.node_n(element))) / el.value;
    case ElementKind::capacitor:
    case ElementKind::inductor:
      return i_[role_[element]];
    case ElementKind::voltage_source:
      return x_[circuit_.node_count() - 1 + role_[element]];
  }
  return 0.0;
}

}  // namespace tb::dsp
