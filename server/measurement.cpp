#include "server/measurement.hpp"

#include <algorithm>
#include <cmath>
#include <numbers>
#include <sstream>

#include "dsp/setup_advice.hpp"
#include "dsp/signal_checks.hpp"
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
  if (!(r.level_fs >= 0 && r.level_fs <= 1) || !(r.level_cap_fs > 0 && r.level_cap_fs <= 1)) {
    throw Error("measure.bad_level",
                "output level " + std::to_string(r.level_fs) + " (cap " +
                    std::to_string(r.level_cap_fs) + ") of full scale",
                "use a level between 0 (automatic) and 1 of full scale, and a cap above 0");
  }
  if (!(r.duration_s >= 0.1 && r.duration_s <= 60)) {
    throw Error("measure.bad_duration", "duration " + std::to_string(r.duration_s) + " s",
                "use 0.1 to 60 s");
  }
  if (!(r.settle_s >= 0.01 && r.settle_s <= 5)) {
    throw Error("measure.bad_duration", "settling time " + std::to_string(r.settle_s) + " s",
                "use 0.01 to 5 s");
  }
  const std::size_t block = block_for(r.freq_hz, fs);
  const auto blocks = std::max<std::size_t>(
      4, static_cast<std::size_t>(std::lround(r.duration_s * fs / static_cast<double>(block))));
  return dsp::plan_tones({.sample_rate_hz = fs,
                          .block_len = block,
                          .requested_hz = {r.freq_hz},
                          .fade_in_s = 0.02,
                          .settle_s = r.settle_s,
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
  c.rref_tempco_ppm_per_k = r.rref_tempco_ppm_per_k;
  c.rref_temp_span_k = r.rref_temp_span_k;
  c.rref_inductance_h = r.rref_inductance_h;
  c.volts_per_fs = r.volts_per_fs;
  c.tones_hz = {achieved_hz};
  c.force_kind = r.force_kind;
  return c;
}

// Plays the tone and analyses the capture. A clipped capture is played again at a third of
// the level (twice at most): the card's output can swing more than its inputs take. So is a
// capture whose node A is distorted: the card's output cannot drive the load (Rref plus the
// part) at that level, at its current limit. Its harmonics then reach the inputs' own
// non-linearity unequally at node A and node B, which moves the ratio at the fundamental by
// more than the budget knows: 2.8 % for a 1 ohm coil on Rref 1 ohm at 0.5 of full scale on
// the seed-1 simulated card, where node A read 75 % THD (0.07 % and 0.001 % at 0.1).
struct Played {
  dsp::ToneReading reading;
  double level_fs = 0;
  double drive_thd = 0;                 ///< node A's THD in the analysed stretch
  bool lowered_for_distortion = false;  ///< the level was lowered for it (else for clipping)
};

// Node A's THD above this is the card's output failing to drive the load, not the card's own
// distortion (a healthy card's is 0.001-0.01 %, common practice, no source).
constexpr double kDriveThdMax = 0.01;

// The analysed stretch of a single-tone capture: from `guard` samples after the analysis
// start (the device's latency) to the start of the fade-out.
// Returns node A's THD over that stretch.
double check_generator(const Capture& cap, const dsp::TonePlan& plan, std::size_t guard,
                       double level) {
  const std::size_t block =
      std::max(plan.block_len, static_cast<std::size_t>(plan.sample_rate_hz / 10));
  // The excitation fades out over its last fade_in_samples: not a change of the source.
  const std::size_t end =
      plan.total_samples() - std::min(plan.fade_in_samples, plan.total_samples());
  const std::size_t begin = plan.analysis_start() + guard;
  check_generator_level(cap.a, begin, end, block, level / std::sqrt(2.0), plan.sample_rate_hz);
  if (end <= begin || end > cap.a.size()) return 0;
  return dsp::tone_distortion(std::span(cap.a).subspan(begin, end - begin), plan.sample_rate_hz,
                              plan.tones[0].achieved_hz);
}

Played play_and_analyze(AudioDevice& device, const MeasureRequest& request,
                        dsp::AnalysisConfig config, double level) {
  const auto plan = plan_for(request);
  config.tones_hz = {plan.tones[0].achieved_hz};
  bool lowered_for_distortion = false;
  for (int attempt = 0;; ++attempt) {
    const auto x = excitation(plan, level);
    const auto cap = play_and_capture(device, request.stream, x, request.stream.period_frames * 4,
                                      request.cancel);
    const double thd = check_generator(cap, plan, request.stream.period_frames * 4, level);
    // Clipped inputs distort node A too: that is reported as clipping, so it is judged first.
    std::optional<dsp::ToneReading> reading;
    try {
      reading = dsp::analyze_recording(cap.a, cap.b, config).readings.at(0);
    } catch (const dsp::AnalysisError& e) {
      if (e.id() != "recording.clipped" || attempt == 2) throw;
      level /= 3;
      lowered_for_distortion = false;
      continue;
    }
    if (thd > kDriveThdMax && attempt < 2) {
      level /= 3;
      lowered_for_distortion = true;
      continue;
    }
    return {std::move(*reading), level, thd, lowered_for_distortion};
  }
}

// The level of a step that plays without the automatic level (a calibration step, a raw
// capture): the request's, or 0.3 of the cap when the request asks for automatic.
double plain_level(const MeasureRequest& request) {
  return request.level_fs > 0 ? request.level_fs : 0.3 * request.level_cap_fs;
}

// The pre-listen's capture (output silent) and its largest sample.
struct Listened {
  double peak = 0;
  Capture cap;
};

Listened listen(AudioDevice& device, const StreamSpec& spec, double seconds,
                const std::atomic<bool>* cancel) {
  const std::vector<double> silence(static_cast<std::size_t>(seconds * spec.sample_rate_hz), 0.0);
  Listened l{0, play_and_capture(device, spec, silence, 0, cancel)};
  for (const auto* ch : {&l.cap.a, &l.cap.b})
    for (double v : *ch)
      l.peak = std::max(l.peak, std::abs(v));
  if (l.peak > 0.02) {
    throw Error("part.charged",
                "a jump of " + std::to_string(static_cast<int>(std::lround(l.peak * 100))) +
                    " % of full scale came from the jig with the output silent: the part may be "
                    "charged or connected to a live circuit",
                "DISCONNECT IT NOW, discharge it through a bleeder resistor, confirm near 0 V with "
                "a meter, then measure again; never measure parts in powered equipment");
  }
  return l;
}

std::string num(double v, int digits = 3) {
  std::ostringstream s;
  s.precision(digits);
  s << v;
  return s.str();
}

std::string db(double fs) {
  return num(20 * std::log10(std::max(fs, 1e-12)), 3) + " dBFS";
}

void note(MeasureResult& out, std::string id, std::string message, std::string hint) {
  out.notices.push_back({std::move(id), std::move(message), std::move(hint)});
}

// Checks on the pre-listen capture: DC offset at either input, hum at the mains harmonics.
void check_silence(MeasureResult& out, const Capture& cap, const MeasureRequest& r) {
  const char* names[] = {"input 1 (node A)", "input 2 (node B)"};
  const std::vector<double>* chans[] = {&cap.a, &cap.b};
  for (int i = 0; i < 2; ++i) {
    const auto dc = dsp::check_dc_offset(*chans[i]);
    if (dc.excessive) {
      note(out, "input.dc_offset",
           std::string(names[i]) + " sits at " + num(dc.mean_fs * 100, 2) +
               " % of full scale with the output silent (DC offset)",
           "the offset takes headroom and, on a DC-coupled input, biases the part: use an "
           "AC-coupled input or a series capacitor, and check the jig for leakage or a "
           "charged part");
    }
  }
  dsp::Hum worst;
  for (const auto* ch : chans) {
    const auto h = dsp::measure_hum(*ch, r.stream.sample_rate_hz, r.mains_hz);
    if (h.total_rms_fs > worst.total_rms_fs) worst = h;
  }
  if (worst.excessive) {
    note(out, "signal.hum",
         "the inputs pick up mains hum of " + db(worst.total_rms_fs) + " rms (strongest at " +
             num(worst.worst_hz, 4) + " Hz) with the output silent",
         "look for a ground loop (card and bench gear on different outlets, a USB hub, a "
         "scope ground), keep the jig leads short and twisted together, away from "
         "transformers and mains cables");
  }
}

// A tone on a mains harmonic takes the hum there with it: a fixed error the block spread
// does not show, bounded from the hum the silent capture holds at that frequency.
void add_hum_terms(dsp::ToneReading& reading, const Capture& silent, const MeasureRequest& r) {
  const double f = reading.freq_hz;
  const double fs = r.stream.sample_rate_hz;
  if (!(r.mains_hz > 0) || !(f > 0)) return;
  const double hum_a = dsp::component_at(silent.a, fs, r.mains_hz, f);
  const double hum_b = dsp::component_at(silent.b, fs, r.mains_hz, f);
  const double m = dsp::hum_on_tone_rel(f, r.mains_hz, hum_a, hum_b, reading.level_a,
                                        reading.level_b, reading.ratio);
  if (!(m > 0)) return;
  const auto z = reading.z.value;
  const double u = m / std::numbers::sqrt2;
  reading.z.type_b.push_back({"mains_hum_real", z, u});
  reading.z.type_b.push_back({"mains_hum_imag", z * std::complex<double>(0, 1), u});
  dsp::update_derived(reading, r.force_kind);
}

void check_frequency(MeasureResult& out, const MeasureRequest& r) {
  const auto plan = plan_for(r);
  const double f = plan.tones[0].achieved_hz;
  const double bin = r.stream.sample_rate_hz / static_cast<double>(plan.block_len);
  // Up to the 8th harmonic of 50 Hz mains: where hum is strong enough to matter (the
  // usual 100/120 Hz choice above all). Higher harmonics are weak, and warning at 1 kHz
  // (the 20th of 50 Hz), the usual test frequency, would cry wolf on every reading.
  // Above 0.4 of the rate the card's anti-alias and reconstruction filters roll off and
  // may differ between the inputs: a channel match at that frequency is what keeps the
  // reading honest.
  if (f > 0.4 * r.stream.sample_rate_hz) {
    note(out, "signal.near_nyquist",
         "the test frequency " + num(f, 5) + " Hz is above 0.4 of the " +
             num(r.stream.sample_rate_hz, 6) +
             " Hz sample rate, where the card's anti-alias filters roll off",
         "use a sample rate of 96 kHz for frequencies above about 15 kHz, or take the channel "
         "match at this frequency");
  }
  const auto m = dsp::check_mains_proximity(f, r.mains_hz, bin, 2, 400);
  if (!m.near) return;
  note(out, "signal.near_mains",
       "the test frequency " + num(f, 5) + " Hz lies within " + num(2 * bin, 3) + " Hz of " +
           num(m.harmonic_hz, 5) + " Hz, harmonic " + std::to_string(m.harmonic) + " of the " +
           num(r.mains_hz, 3) + " Hz mains, where hum adds to the reading",
       "measure at " + num(m.suggested_hz, 5) + " Hz instead" +
           (m.suggested_hz == 100 || m.suggested_hz == 120
                ? " (IEC allows 100 Hz or 120 Hz: use the one that is not a mains harmonic)"
                : ""));
}

void check_strength(MeasureResult& out, const dsp::ToneReading& rd) {
  const auto s = dsp::check_signal_strength(rd.level_b, rd.snr_a_db, rd.snr_b_db);
  if (!s.weak()) return;
  note(out, "signal.weak",
       "the signal is too weak for a useful reading: node B at " + db(rd.level_b) +
           " peak, per-block SNR " + num(rd.snr_a_db, 3) + " dB (A) and " + num(rd.snr_b_db, 3) +
           " dB (B)",
       "raise the output level (up to level_cap_fs) or switch to a reference resistor nearer "
       "|Z| (see the advice)");
}

// The probe and the level it leads to, for an automatic level or a capped part class.
dsp::LevelChoice choose_level(AudioDevice& device, const MeasureRequest& request,
                              const dsp::AnalysisConfig& config, double cap_vrms) {
  // About -34 dBFS: far below any cap (100 mV peak needs a DAC above 5 V full scale to
  // pass it), yet some 60 dB above a card's noise in 0.4 s.
  MeasureRequest probe = request;
  probe.duration_s = 0.1;
  const double probe_level =
      std::min({0.02, request.level_cap_fs, request.level_fs > 0 ? request.level_fs : 1.0});
  const auto p = play_and_analyze(device, probe, config, probe_level);
  return dsp::choose_level({.level_fs = p.level_fs,
                            .peak_fs = std::max(p.reading.level_a, p.reading.level_b),
                            .part_vrms = p.reading.v_part_rms,
                            .requested_fs = request.level_fs,
                            .level_cap_fs = request.level_cap_fs,
                            .part_cap_vrms = cap_vrms});
}

}  // namespace

double pre_listen(AudioDevice& device, const StreamSpec& spec, double seconds,
                  const std::atomic<bool>* cancel) {
  return listen(device, spec, seconds, cancel).peak;
}

Capture pre_listen_capture(AudioDevice& device, const StreamSpec& spec, double seconds,
                           const std::atomic<bool>* cancel, double& peak) {
  auto l = listen(device, spec, seconds, cancel);
  peak = l.peak;
  return std::move(l.cap);
}

void add_mains_hum_terms(dsp::ToneReading& reading, const Capture& silent,
                         const MeasureRequest& request) {
  add_hum_terms(reading, silent, request);
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
  const auto played = play_and_analyze(device, request, c, plain_level(request));
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
  const auto played = play_and_analyze(device, request, config, plain_level(request));
  out.reading = played.reading;
  out.level_fs = played.level_fs;
  return out;
}

double played_frequency_hz(const MeasureRequest& request) {
  return plan_for(request).tones.at(0).achieved_hz;
}

void add_signal_notices(MeasureResult& out, const Capture* silent, const MeasureRequest& request) {
  if (silent) check_silence(out, *silent, request);
  check_frequency(out, request);
  check_strength(out, out.reading);
}

MeasureResult measure_once(AudioDevice& device, const MeasureRequest& request,
                           const std::optional<ChannelMatch>& match,
                           const std::optional<dsp::FixtureStandards>& fixture) {
  MeasureResult out;
  out.requested_hz = request.freq_hz;
  plan_for(request);  // refuses a bad request before anything is played
  const auto cap_vrms = dsp::part_voltage_cap_vrms(request.part_class);
  const std::string class_name(dsp::part_class_name(request.part_class));
  if (cap_vrms && !(request.volts_per_fs > 0)) {
    throw Error("measure.level_unknown",
                "a " + class_name + " part may see at most " + format_si(*cap_vrms, "V", 3) +
                    " rms, but the inputs' full scale in volts is not known",
                "take the level calibration (or set full_scale_vrms from a meter reading), or "
                "measure it as a general part");
  }
  const auto heard = listen(device, request.stream, 0.1, request.cancel);
  out.pre_listen_peak_fs = heard.peak;
  check_silence(out, heard.cap, request);
  check_frequency(out, request);

  auto config = analysis_config_for(request, request.freq_hz, match);
  out.channel_match = match;
  dsp::LevelChoice level{request.level_fs, dsp::LevelLimit::requested};
  if (request.level_fs == 0 || cap_vrms)
    level = choose_level(device, request, config, cap_vrms.value_or(0));
  auto played = play_and_analyze(device, request, config, level.level_fs);
  const auto lowered_for = [](const Played& p) {
    return p.lowered_for_distortion ? dsp::LevelLimit::drive_distortion : dsp::LevelLimit::clipping;
  };
  const double level_tried = level.level_fs;
  if (played.level_fs < level.level_fs) level.limited_by = lowered_for(played);
  // A non-linear part (an iron core, a junction) may take more voltage at the full level
  // than the probe's scaling promised: lower and take it once more.
  if (cap_vrms && played.reading.v_part_rms > *cap_vrms) {
    const double lower = played.level_fs * 0.9 * *cap_vrms / played.reading.v_part_rms;
    const auto again = play_and_analyze(device, request, config, lower);
    if (again.level_fs < lower)
      level.limited_by = lowered_for(again);
    else
      level.limited_by = dsp::LevelLimit::part_voltage;
    played = again;
  }
  out.reading = played.reading;
  out.level_fs = played.level_fs;
  out.level_limited_by = level.limited_by;
  if (level.limited_by == dsp::LevelLimit::clipping) {
    note(out, "level.lowered",
         "the inputs clipped at output level " + num(level.level_fs) +
             " of full scale; the reading was taken at " + num(out.level_fs),
         "nothing to do for this reading; to avoid the retake, lower level_fs or the card's "
         "output volume, or use the automatic level");
  }
  if (level.limited_by == dsp::LevelLimit::drive_distortion) {
    note(out, "level.lowered",
         "the card's output distorted driving this load at output level " + num(level_tried) +
             " of full scale; the reading was taken at " + num(out.level_fs) + " of full scale",
         "nothing to do for this reading; a larger Rref (the card drives Rref plus the part) "
         "or a lower level_fs avoids the retake");
  }
  if (played.drive_thd > kDriveThdMax) {
    note(out, "signal.drive_distorted",
         "the test signal at input 1 (node A) is distorted (" + num(played.drive_thd * 100, 2) +
             " % THD) even at output level " + num(out.level_fs) +
             ": the card's output cannot drive this load cleanly, and the reading may be off by "
             "more than its uncertainty",
         "use a larger Rref (the card drives Rref plus the part), a card output made for low "
         "loads, or a lower level_fs; then measure again");
  }
  if (cap_vrms) {
    if (out.reading.v_part_rms > *cap_vrms) {
      note(out, "level.above_part_cap",
           "the part saw " + format_si(out.reading.v_part_rms, "V", 3) + " rms, above the " +
               format_si(*cap_vrms, "V", 3) + " rms allowed for a " + class_name + " part",
           "lower level_fs or the card's output volume and measure again");
    }
    if (!request.level_calibrated) {
      note(out, "level.uncalibrated",
           "the voltage across the part (" + format_si(out.reading.v_part_rms, "V", 3) +
               " rms, cap " + format_si(*cap_vrms, "V", 3) +
               ") is worked out from the full_scale_vrms setting, not from a level calibration",
           "take the level calibration (a meter reading at node A) so the cap is kept for sure");
    }
  }
  if (request.part_class == dsp::PartClass::in_circuit) {
    out.indicative = true;
    note(out, "reading.indicative",
         "measured in circuit: other parts in parallel change the reading, so it is "
         "indicative and no pass/fail verdict is given",
         "lift one leg of the part out of the circuit for a reading that can be judged");
  }
  check_strength(out, out.reading);
  add_hum_terms(out.reading, heard.cap, request);
  if (fixture) {
    out.reading.z = dsp::compensate(out.reading.z, *fixture);
    dsp::update_derived(out.reading, request.force_kind);
    out.fixture_compensated = true;
  }
  out.advice = advise(out.reading, request);
  return out;
}

dsp::AnalysisConfig analysis_config_for(const MeasureRequest& request, double freq_hz,
                                        const std::optional<ChannelMatch>& match) {
  auto config = analysis_config(request, freq_hz);
  if (match) {
    config.bridge.channel_match = match->h;
    config.channel_gain_u_rel = match->u_gain_rel;
    config.channel_phase_u_rad = match->u_phase_rad;
    config.channel_interp_gain_u_rel = match->interp_gain_u_rel;
    config.channel_interp_phase_u_rad = match->interp_phase_u_rad;
  }
  return config;
}

Advice advise(const dsp::ToneReading& reading, const MeasureRequest& request) {
  Advice a;
  a.rref_ohm = request.rref_ohm;
  a.layout = request.layout;
  const std::complex<double> z = reading.z.value;
  if (!(std::abs(z) > 0) || !std::isfinite(std::abs(z)) || !(reading.level_a > 0)) return a;
  dsp::SetupModel m;
  m.freq_hz = reading.freq_hz > 0 ? reading.freq_hz : request.freq_hz;
  // The card's noise carries over to any set-up; per-block SNR to the standard deviation of the
  // mean, relative to node A's level.
  const double n = static_cast<double>(std::max<std::size_t>(reading.blocks_used, 1));
  const auto noise = [&](double level, double snr_db) {
    return level * std::pow(10.0, -snr_db / 20) / std::sqrt(n) / reading.level_a;
  };
  m.noise_a_rel = noise(reading.level_a, reading.snr_a_db);
  m.noise_b_rel_a = noise(reading.level_b, reading.snr_b_db);
  // What moves both channels alike (the source's level, a settling coupling capacitor)
  // lowers each channel's SNR but cancels in the ratio: where the channels' scatter
  // promises more ratio scatter than was seen, scale it down to the ratio's own.
  const double r_mag = reading.level_b / reading.level_a;
  const double promised = std::hypot(m.noise_a_rel, r_mag > 0 ? m.noise_b_rel_a / r_mag : 0.0);
  if (promised > reading.ratio_u_rel && reading.ratio_u_rel > 0) {
    m.noise_a_rel *= reading.ratio_u_rel / promised;
    m.noise_b_rel_a *= reading.ratio_u_rel / promised;
  }
  m.input_residual_rel = request.input_loading_residual_rel;
  m.rref_tolerance_rel = request.rref_tolerance_rel;
  std::vector<double> rrefs = request.rref_set_ohm;
  if (std::find(rrefs.begin(), rrefs.end(), request.rref_ohm) == rrefs.end())
    rrefs.push_back(request.rref_ohm);
  const auto now = dsp::predict_setup(m, z, request.layout, request.rref_ohm);
  const auto best = dsp::best_setup(m, z, rrefs);
  a.u_now_rel = 2 * now.u_rel;
  a.u_advised_rel = 2 * now.u_rel;
  if (!(now.u_rel > 1.5 * best.u_rel)) return a;
  a.rref_ohm = best.rref_ohm;
  a.layout = best.layout;
  a.u_advised_rel = 2 * best.u_rel;
  a.better_than_present = true;
  a.text = "for |Z| = " + format_si(std::abs(z), "Ω", 3) + " use Rref " +
           format_si(best.rref_ohm, "Ω", 3) + " in the " +
           std::string(dsp::layout_name(best.layout)) + " layout: predicted ±" +
           num(a.u_advised_rel * 100, 2) + " % instead of ±" + num(a.u_now_rel * 100, 2) +
           " % now (k = 2)";
  return a;
}

void check_generator_level(std::span<const double> a, std::size_t begin, std::size_t end,
                           std::size_t block, double played_rms_fs, double sample_rate_hz) {
  begin = std::min(begin, a.size());
  end = std::min(end, a.size());
  if (end <= begin || block == 0) return;
  const auto s = dsp::check_source_steady(a.subspan(begin, end - begin), block, played_rms_fs);
  const auto at_s = [&](std::size_t k) {
    std::ostringstream o;
    o.precision(2);
    o << std::fixed << static_cast<double>(begin + k * block) / sample_rate_hz;
    return o.str();
  };
  if (s.lost) {
    throw Error("signal.lost",
                s.median_rms_fs < dsp::kSourceSilentRel * played_rms_fs
                    ? "no test signal reached input 1 (node A) while the tone played"
                    : "the test signal at input 1 (node A) dropped out " + at_s(s.worst_block) +
                          " s into the capture",
                "check the lead from the card's output to the jig and the input 1 connection, "
                "and that nothing else took over the card; then measure again");
  }
  if (s.changed) {
    throw Error("signal.level_changed",
                "the test signal at input 1 (node A) changed level by " +
                    std::to_string(static_cast<int>(std::lround(s.worst_change_rel * 100))) +
                    " % " + at_s(s.worst_block) + " s into the capture",
                "look for a loose lead or a touched volume control, and keep the card's "
                "automatic gain and effects off; then measure again");
  }
}

}  // namespace tb
