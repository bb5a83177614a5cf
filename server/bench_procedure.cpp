#include "server/bench_procedure.hpp"

#include "dsp/recording_analysis.hpp"

namespace tb {

dsp::Netlist open_jig() {
  return {{{dsp::ElementKind::resistor, "open", "p", "n", 1e12}}};
}

dsp::Netlist shorted_jig() {
  return {{{dsp::ElementKind::resistor, "short", "p", "n", 1e-6}}};
}

MeasureResult measure_on_bench(SimulatedCard& card, const dsp::JigSetup& jig,
                               const dsp::Netlist& part, const MeasureRequest& request,
                               const BenchCorrections& corrections) {
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
    fixture = s;
  }
  card.reconnect(jig, part);
  return measure_once(card, request, match, fixture);
}

}  // namespace tb
