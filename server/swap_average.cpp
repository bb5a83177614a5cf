#include "server/swap_average.hpp"

#include <algorithm>
#include <stdexcept>
#include <string>

#include "dsp/swap_average.hpp"

namespace tb {

namespace {

// The device seen with its two inputs exchanged: channel 1 of the callback carries input 2.
class ExchangedInputs final : public AudioDevice {
 public:
  explicit ExchangedInputs(AudioDevice& inner) : inner_(inner) {}
  DeviceInfo info() const override { return inner_.info(); }
  void start(const StreamSpec& spec, DuplexCallback callback) override {
    inner_.start(spec,
                 [cb = std::move(callback)](std::span<const float> a, std::span<const float> b,
                                            std::span<float> out) { return cb(b, a, out); });
  }
  void stop() override { inner_.stop(); }
  bool running() const override { return inner_.running(); }
  std::uint64_t xruns() const override { return inner_.xruns(); }

 private:
  AudioDevice& inner_;
};

dsp::UncertainComplex uncertain_ratio(const dsp::ToneReading& r, bool inverted) {
  const double dof = r.blocks_used > 1 ? static_cast<double>(r.blocks_used - 1) : 0.0;
  // A relative, circular uncertainty is the same for 1/x as for x.
  return dsp::ratio_with_type_a(inverted ? 1.0 / r.ratio : r.ratio, r.ratio_u_rel, dof);
}

}  // namespace

MeasureResult measure_swap_averaged(AudioDevice& device, const MeasureRequest& request,
                                    const std::optional<dsp::FixtureStandards>& fixture,
                                    const std::function<void(bool swapped)>& connect) {
  connect(false);
  const auto normal = capture_uncorrected(device, request);  // r1 = H r
  // The same level for both captures, so the part sees the same test signal.
  auto second = request;
  second.level_fs = normal.level_fs;
  connect(true);
  ExchangedInputs exchanged(device);
  // Input 1 reads node b, input 2 node a; exchanged, the ratio is r / H = 1 / r2.
  const auto swapped = capture_uncorrected(exchanged, second);

  const auto avg = dsp::swap_average(uncertain_ratio(normal.reading, false),
                                     uncertain_ratio(swapped.reading, true));
  MeasureResult out;
  out.requested_hz = request.freq_hz;
  out.reading = normal.reading;
  out.level_fs = normal.level_fs;
  out.pre_listen_peak_fs = std::max(normal.pre_listen_peak_fs, swapped.pre_listen_peak_fs);
  out.swap_averaged = true;
  try {
    out.reading.z = dsp::impedance_from_uncertain_ratio(request.layout, request.rref_ohm,
                                                        request.rref_tolerance_rel, avg.ratio);
  } catch (const std::domain_error&) {
    throw dsp::AnalysisError(
        "analysis.bridge_singular",
        "node B reads the same as " +
            std::string(request.layout == dsp::Layout::part_low ? "node A" : "ground") +
            " after swap-and-average",
        "the part is open or missing: check the connection");
  }
  dsp::update_derived(out.reading, request.force_kind);
  if (fixture) {
    out.reading.z = dsp::compensate(out.reading.z, *fixture);
    dsp::update_derived(out.reading, request.force_kind);
    out.fixture_compensated = true;
  }
  if (out.reading.v_part_rms > 0)
    out.reading.i_part_rms = out.reading.v_part_rms / std::max(out.reading.values.mag_ohm, 1e-300);
  out.advice = advise(out.reading, request);
  return out;
}

}  // namespace tb
