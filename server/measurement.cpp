#include "server/measurement.hpp"

#include <algorithm>
#include <cmath>

#include "dsp/tone_plan.hpp"
#include "server/capture.hpp"
#include "server/error.hpp"
#include "server/reading_text.hpp"

namespace tb {

namespace {

// Block of 0.1 s (10 Hz bins at any rate that is a multiple of 10), longer for low tones
// so a block holds at least 4 periods.
std::size_t block_for(double freq_hz, double fs) {
  auto len = static_cast<std::size_t>(std::lround(fs / 10));
  if (freq_hz < 40) len = static_cast<std::size_t>(std::lround(std::ceil(4 * fs / freq_hz)));
  return len;
}

dsp::TonePlan plan_for(const MeasureRequest& r) {
  const double fs = r.stream.sample_rate_hz;
  if (!(r.freq_hz >= 1 && r.freq_hz < 0.45 * fs)) {
    throw Error(
        "measure.bad_frequency",
        std::to_string(r.freq_hz) + " Hz is outside 1 Hz to " + std::to_string(0.45 * fs) + " Hz",
        "pick a test frequency below 0.45 of the sample rate (use 96 kHz above ~20 kHz)");
  }
  if (!(r.level_fs > 0 && r.level_fs <= 1)) {
    throw Error("measure.bad_level",
                "output level " + std::to_string(r.level_fs) + " of full scale",
                "use a level between 0 and 1 of full scale");
  }
  if (!(r.duration_s >= 0.1 && r.duration_s <= 60)) {
    throw Error("measure.bad_duration", "duration " + std::to_string(r.duration_s) + " s",
                "use 0.1 to 60 s");
  }
  const std::size_t block = block_for(r.freq_hz, fs);
  const auto blocks = std::max<std::size_t>(
      4, static_cast<std::size_t>(std::lround(r.duration_s * fs / static_cast<double>(block))));
  return dsp::plan_tones({.sample_rate_hz = fs,
                          .block_len = block,
                          .requested_hz = {r.freq_hz},
                          .fade_in_s = 0.02,
                          .settle_s = 0.1,
                          .blocks = blocks});
}

std::vector<double> excitation(const dsp::TonePlan& plan, double level) {
  const double amp[] = {level}, ph[] = {0.0};
  auto x = dsp::synthesize(plan, amp, ph);
  // A short fade-out as well, so the part is not left with a step.
  const std::size_t fade = std::min<std::size_t>(plan.fade_in_samples, x.size());
  for (std::size_t i = 0; i < fade; ++i) {
    x[x.size() - 1 - i] *= 0.5 - 0.5 * std::cos(3.141592653589793 * static_cast<double>(i) /
                                                static_cast<double>(fade));
  }
  return x;
}

dsp::AnalysisConfig analysis_config(const MeasureRequest& r, double achieved_hz) {
  dsp::AnalysisConfig c;
  c.sample_rate_hz = r.stream.sample_rate_hz;
  c.bridge.layout = r.layout;
  c.bridge.rref_ohm = r.rref_ohm;
  c.rref_tolerance_rel = r.rref_tolerance_rel;
  c.volts_per_fs = r.volts_per_fs;
  c.tones_hz = {achieved_hz};
  c.force_kind = r.force_kind;
  return c;
}

// Plays the tone and analyses the capture. A clipped capture is played again at a third of
// the level (twice at most): the card's output can swing more than its inputs take.
struct Played {
  dsp::ToneReading reading;
  double level_fs = 0;
};

Played play_and_analyze(AudioDevice& device, const MeasureRequest& request,
                        dsp::AnalysisConfig config) {
  const auto plan = plan_for(request);
  config.tones_hz = {plan.tones[0].achieved_hz};
  double level = request.level_fs;
  for (int attempt = 0;; ++attempt) {
    const auto x = excitation(plan, level);
    const auto cap = play_and_capture(device, request.stream, x, request.stream.period_frames * 4,
                                      request.cancel);
    try {
      return {dsp::analyze_recording(cap.a, cap.b, config).readings.at(0), level};
    } catch (const dsp::AnalysisError& e) {
      if (e.id() != "recording.clipped" || attempt == 2) throw;
      level /= 3;
    }
  }
}

}  // namespace

double pre_listen(AudioDevice& device, const StreamSpec& spec, double seconds,
                  const std::atomic<bool>* cancel) {
  const std::vector<double> silence(static_cast<std::size_t>(seconds * spec.sample_rate_hz), 0.0);
  const auto cap = play_and_capture(device, spec, silence, 0, cancel);
  double peak = 0;
  for (const auto* ch : {&cap.a, &cap.b})
    for (double v : *ch)
      peak = std::max(peak, std::abs(v));
  if (peak > 0.02) {
    throw Error("part.charged",
                "a jump of " + std::to_string(static_cast<int>(std::lround(peak * 100))) +
                    " % of full scale came from the jig with the output silent: the part may be "
                    "charged or connected to a live circuit",
                "DISCONNECT IT NOW, discharge it through a bleeder resistor, confirm near 0 V with "
                "a meter, then measure again; never measure parts in powered equipment");
  }
  return peak;
}

ChannelMatch measure_channel_match(AudioDevice& device, const MeasureRequest& request) {
  // The part stays on the jig during this step, so listen for a charge before playing.
  pre_listen(device, request.stream, 0.1, request.cancel);
  // Both inputs read node A: H is the plain mean ratio; its scatter is the calibration's
  // Type A, carried into the readings' budget as gain and phase terms.
  dsp::AnalysisConfig c = analysis_config(request, request.freq_hz);
  c.bridge.layout = dsp::Layout::part_high;  // any: only the ratio is used
  c.rref_tolerance_rel = 0;
  c.check_swapped = false;
  const auto played = play_and_analyze(device, request, c);
  const auto& r = played.reading;
  ChannelMatch m;
  m.h = r.ratio;
  m.level_a_fs = r.level_a;
  m.level_fs = played.level_fs;
  // The relative scatter of a complex mean splits evenly between its magnitude (gain)
  // and its angle (phase) when the noise is circular.
  m.u_gain_rel = r.ratio_u_rel / std::sqrt(2.0);
  m.u_phase_rad = r.ratio_u_rel / std::sqrt(2.0);
  return m;
}

RawCapture capture_uncorrected(AudioDevice& device, const MeasureRequest& request) {
  RawCapture out;
  plan_for(request);  // refuses a bad request before anything is played
  out.pre_listen_peak_fs = pre_listen(device, request.stream, 0.1, request.cancel);
  auto config = analysis_config(request, request.freq_hz);
  config.check_swapped = false;
  const auto played = play_and_analyze(device, request, config);
  out.reading = played.reading;
  out.level_fs = played.level_fs;
  return out;
}

MeasureResult measure_once(AudioDevice& device, const MeasureRequest& request,
                           const std::optional<ChannelMatch>& match,
                           const std::optional<dsp::FixtureStandards>& fixture) {
  MeasureResult out;
  out.requested_hz = request.freq_hz;
  plan_for(request);  // refuses a bad request before anything is played
  out.pre_listen_peak_fs = pre_listen(device, request.stream, 0.1, request.cancel);
  auto config = analysis_config(request, request.freq_hz);
  if (match) {
    config.bridge.channel_match = match->h;
    config.channel_gain_u_rel = match->u_gain_rel;
    config.channel_phase_u_rad = match->u_phase_rad;
    out.channel_match = match;
  }
  const auto played = play_and_analyze(device, request, config);
  out.reading = played.reading;
  out.level_fs = played.level_fs;
  if (fixture) {
    out.reading.z = dsp::compensate(out.reading.z, *fixture);
    dsp::update_derived(out.reading, request.force_kind);
    out.fixture_compensated = true;
  }
  out.advice =
      advise(out.reading.values.mag_ohm, request.rref_ohm, request.layout, request.rref_set_ohm);
  return out;
}

Advice advise(double z_mag_ohm, double present_rref_ohm, dsp::Layout present_layout,
              const std::vector<double>& available) {
  Advice a;
  a.rref_ohm = present_rref_ohm;
  double best = std::abs(std::log(z_mag_ohm / present_rref_ohm));
  for (double r : available) {
    const double d = std::abs(std::log(z_mag_ohm / r));
    if (d < best - 1e-9) {
      best = d;
      a.rref_ohm = r;
    }
  }
  a.layout = z_mag_ohm >= 10e3 ? dsp::Layout::part_high : dsp::Layout::part_low;
  // Only advise a change that matters: a factor of 3 in Rref, or the layout.
  const bool rref_better = std::abs(std::log(z_mag_ohm / present_rref_ohm)) > std::log(3.0) &&
                           a.rref_ohm != present_rref_ohm;
  a.better_than_present = rref_better || a.layout != present_layout;
  if (!rref_better) a.rref_ohm = present_rref_ohm;
  if (a.better_than_present) {
    a.text = "for |Z| = " + format_si(z_mag_ohm, "Ω", 3) + " use Rref " +
             format_si(a.rref_ohm, "Ω", 3) + " in the " + std::string(dsp::layout_name(a.layout)) +
             " layout";
  }
  return a;
}

}  // namespace tb
