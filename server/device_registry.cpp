#include "server/device_registry.hpp"

#include "dsp/part_spec.hpp"
#include "server/error.hpp"
#include "server/simulated_card.hpp"

namespace tb {

namespace {

SimulatedBenchConfig bench_config(const Settings& s) {
  SimulatedBenchConfig c;
  const auto seed = static_cast<std::uint64_t>(s.integer("sim_seed"));
  c.card = dsp::draw_card_faults({.seed = seed});
  c.jig.layout = *dsp::parse_layout(s.text("layout"));
  c.jig.rref_ohm = s.number("rref_ohm");
  c.part = dsp::parse_part(s.text("sim_part")).netlist;
  c.noise_seed = seed * 7919 + 1;
  // The hidden true reference lies within the tolerance the user states for it.
  c.rref_tolerance_rel = s.number("rref_tolerance_pct") / 100;
  c.real_time = s.boolean("sim_real_time");
  return c;
}

}  // namespace

std::vector<DeviceInfo> list_devices(const Settings&) {
  return {SimulatedCard::describe()};
}

std::unique_ptr<AudioDevice> open_device(const Settings& s) {
  const std::string& id = s.text("device");
  if (id == "simulated") return std::make_unique<SimulatedCard>(bench_config(s));
  throw Error("device.unknown", "no audio device '" + id + "'",
              "this version has the simulated bench only: set device = simulated");
}

}  // namespace tb
