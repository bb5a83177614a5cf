#include "server/multisine_sweep.hpp"

#include <algorithm>
#include <cmath>
#include <string>

#include "dsp/steady_region.hpp"
#include "server/capture.hpp"
#include "server/error.hpp"

namespace tb {

dsp::MultisineDesign plan_multisine(const MeasureRequest& r, std::span<const double> freqs_hz,
                                    dsp::MultisineGrid grid) {
  const double fs = r.stream.sample_rate_hz;
  if (!(r.level_fs > 0 && r.level_fs <= r.level_cap_fs && r.level_cap_fs <= 1)) {
    throw Error("measure.bad_level",
                "multisine peak level " + std::to_string(r.level_fs) + " (cap " +
                    std::to_string(r.level_cap_fs) + ") of full scale",
                "use a level above 0 and at most the cap: a multisine has no automatic level");
  }
  for (double f : freqs_hz) {
    if (!(f >= 1 && f < 0.45 * fs)) {
      throw Error("measure.bad_frequency",
                  std::to_string(f) + " Hz is outside 1 Hz to " + std::to_string(0.45 * fs) + " Hz",
                  "pick frequencies below 0.45 of the sample rate (use 96 kHz above ~20 kHz)");
    }
  }
  dsp::MultisineConfig c;
  c.sample_rate_hz = fs;
  c.grid = grid;
  c.requested_hz.assign(freqs_hz.begin(), freqs_hz.end());
  c.peak_fs = r.level_fs;
  try {
    return dsp::design_multisine(c);
  } catch (const std::invalid_argument& e) {
    throw Error("measure.bad_frequency", e.what(),
                "raise the lowest frequency or use fewer points per decade");
  }
}

std::size_t multisine_settle_periods(const dsp::MultisineDesign& d) {
  const auto per_s = static_cast<double>(d.period_len) / d.sample_rate_hz;
  return std::max<std::size_t>(1, static_cast<std::size_t>(std::ceil(0.1 / per_s)));
}

MultisineSweep measure_multisine(AudioDevice& device, const MeasureRequest& request,
                                 const dsp::MultisineDesign& design, std::size_t periods,
                                 std::span<const std::optional<ChannelMatch>> matches,
                                 std::span<const std::optional<dsp::FixtureStandards>> fixtures) {
  if (periods < 2 || periods > 256) {
    throw Error("measure.bad_duration", std::to_string(periods) + " multisine periods",
                "use 2 to 256 periods");
  }
  const std::size_t k = design.tones.size();
  if ((!matches.empty() && matches.size() != k) || (!fixtures.empty() && fixtures.size() != k))
    throw std::invalid_argument("measure_multisine: one correction entry per tone");
  MultisineSweep out;
  out.design = design;
  const double fs = request.stream.sample_rate_hz;
  double listened = 0;
  const Capture silent = pre_listen_capture(device, request.stream, 0.1, request.cancel, listened);
  out.audio_s = 0.1;
  const std::size_t n = design.period_len;
  const auto fade = static_cast<std::size_t>(0.02 * fs);
  const std::size_t settle = multisine_settle_periods(design);
  const std::size_t start = fade + settle * n;
  Capture cap;
  double level = request.level_fs;
  for (int attempt = 0;; ++attempt) {
    const auto x = dsp::multisine_excitation(out.design, fade, settle + periods, fade);
    const std::size_t tail = request.stream.period_frames * 4;
    cap = play_and_capture(device, request.stream, x, tail, request.cancel);
    out.audio_s += static_cast<double>(x.size() + tail) / fs;
    const bool clipped = dsp::detect_clipping(cap.a).clipped_runs > 0 ||
                         dsp::detect_clipping(cap.b).clipped_runs > 0;
    if (!clipped) break;
    if (attempt == 2) {
      throw dsp::AnalysisError(
          "recording.clipped",
          "the inputs clip even at a multisine peak of " + std::to_string(level) + " of full scale",
          "lower the card's output volume or input gain");
    }
    // A third of the level: the same design, scaled.
    level /= 3;
    for (double& v : out.design.period)
      v /= 3;
    for (auto& t : out.design.tones)
      t.amplitude_fs /= 3;
  }
  out.level_fs = level;
  {
    double e = 0;
    for (double v : out.design.period)
      e += v * v;
    const double rms = std::sqrt(e / static_cast<double>(std::max<std::size_t>(1, n)));
    const std::size_t guard = request.stream.period_frames * 4;
    const std::size_t block = std::max(n, static_cast<std::size_t>(fs / 10)) / n * n;
    check_generator_level(cap.a, start + guard, start + periods * n, block, rms, fs);
  }
  // The device's latency delays the capture against the excitation: the analysis must start
  // on a period boundary of what the inputs saw. Whole periods are still whole periods
  // shifted by the latency; only the tones' absolute phases move, and they cancel in B/A.
  out.analysis = dsp::analyze_multisine(cap.a, cap.b, out.design, start, periods);

  for (std::size_t i = 0; i < k; ++i) {
    const auto& tone = out.analysis.tones[i];
    MeasureRequest req = request;
    req.freq_hz = tone.freq_hz;
    const std::optional<ChannelMatch> match = matches.empty() ? std::nullopt : matches[i];
    const auto config = analysis_config_for(req, tone.freq_hz, match);
    MeasureResult r;
    r.requested_hz = tone.freq_hz;
    try {
      r.reading = dsp::reading_from_blocks(tone.a, tone.b, tone.freq_hz, config);
    } catch (const dsp::AnalysisError& e) {
      // This tone alone cannot be read (the part shorts the bridge there): keep its reason.
      out.points.emplace_back();
      out.errors.push_back(ReadingNotice{e.id(), e.what(), e.hint()});
      continue;
    }
    r.reading.coherent = true;
    r.reading.block_len = n;
    r.channel_match = match;
    r.pre_listen_peak_fs = listened;
    r.level_fs = out.design.tones[i].amplitude_fs;
    add_mains_hum_terms(r.reading, silent, req);
    add_signal_notices(r, &silent, req);
    if (!fixtures.empty() && fixtures[i]) {
      r.reading.z = dsp::compensate(r.reading.z, *fixtures[i]);
      dsp::update_derived(r.reading, request.force_kind);
      r.fixture_compensated = true;
    }
    r.advice = advise(r.reading, req);
    out.points.push_back(std::move(r));
    out.errors.emplace_back();
  }
  return out;
}

}  // namespace tb
