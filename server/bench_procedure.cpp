#include "server/bench_procedure.hpp"

#include <stdexcept>

#include "dsp/recording_analysis.hpp"

namespace tb {

dsp::Netlist open_jig() {
  return {{{dsp::ElementKind::resistor, "open", "p", "n", 1e12}}};
}

dsp::Netlist shorted_jig() {
  return {{{dsp::ElementKind::resistor, "short", "p", "n", 1e-6}}};
}

dsp::Netlist load_jig(double ohm) {
  return {{{dsp::ElementKind::resistor, "load", "p", "n", ohm}}};
}

MeasureResult measure_on_bench(SimulatedCard& card, const dsp::JigSetup& jig,
                               const dsp::Netlist& part, const MeasureRequest& request,
                               const BenchCorrections& corrections) {
  if (corrections.load_ohm && !(corrections.open_short && *corrections.load_ohm > 0 &&
                                corrections.load_true_ohm.value_or(1) > 0)) {
    throw std::invalid_argument("bench load standard: needs open_short and a value above 0 ohm");
  }
  std::optional<ChannelMatch> match;
  if (corrections.channel_match) {
    auto both_on_a = jig;
    both_on_a.inputs_on_node_a = true;
    card.reconnect(both_on_a, part);
    match = measure_channel_match(card, request);
  }
  std::optional<dsp::FixtureStandards> fixture;
  if (corrections.open_short) {
    auto plain = request;
    plain.force_kind.reset();
    dsp::FixtureStandards s;
    card.reconnect(jig, open_jig());
    try {
      s.open = measure_once(card, plain, match).reading.z;
    } catch (const dsp::AnalysisError& e) {
      // An open beyond what the bridge resolves (node B equal to node A, as with a card
      // whose input does not load the jig) is an ideal open: no shunt to compensate.
      if (e.id() != "analysis.bridge_singular") throw;
      s.open = {};
      s.open.value = {1e18, 0};
    }
    card.reconnect(jig, shorted_jig());
    s.short_ = measure_once(card, plain, match).reading.z;
    s.reconnect_half_width_ohm = corrections.reconnect_half_width_ohm;
    if (corrections.load_ohm) {
      // The bench connects the true resistor; the compensation is told only what the user
      // would know: the nominal value and its tolerance.
      card.reconnect(jig, load_jig(corrections.load_true_ohm.value_or(*corrections.load_ohm)));
      s.load = dsp::LoadStandard{measure_once(card, plain, match).reading.z, *corrections.load_ohm,
                                 corrections.load_tolerance_rel};
    }
    fixture = s;
  }
  card.reconnect(jig, part);
  return measure_once(card, request, match, fixture);
}

}  // namespace tb
