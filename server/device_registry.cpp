#include "server/device_registry.hpp"

#include "dsp/part_spec.hpp"
#include "server/error.hpp"
#include "server/portaudio_device.hpp"
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
  std::vector<DeviceInfo> out{SimulatedCard::describe()};
  for (auto& d : list_portaudio_devices())
    out.push_back(std::move(d));
  return out;
}

std::unique_ptr<AudioDevice> open_device(const Settings& s) {
  const std::string& id = s.text("device");
  if (id == "simulated") return std::make_unique<SimulatedCard>(bench_config(s));
  if (id.rfind("pa:", 0) == 0) {
    return std::make_unique<PortAudioDevice>(find_portaudio_device(id),
                                             ChannelMap{.node_a = s.integer("input_node_a"),
                                                        .node_b = s.integer("input_node_b"),
                                                        .output = s.integer("output_channel")});
  }
  throw Error("device.unknown", "no audio device '" + id + "'",
              "set device = simulated or a PortAudio id \"pa:...\" (GET /api/v1/devices "
              "lists them)");
}

}  // namespace tb
