#include "dsp/recording_analysis.hpp"

#include <algorithm>
#include <cmath>
#include <numbers>
#include <numeric>
#include <sstream>

#include "dsp/lockin.hpp"
#include "dsp/sine_fit.hpp"
#include "dsp/steady_region.hpp"
#include "dsp/tone_detect.hpp"

namespace tb::dsp {

namespace {

using cplx = std::complex<double>;

std::string fmt(double v, int digits = 4) {
  std::ostringstream s;
  s.precision(digits);
  s << v;
  return s.str();
}

void validate(const AnalysisConfig& c, std::size_t na, std::size_t nb) {
  if (!(c.sample_rate_hz > 0)) throw std::invalid_argument("sample rate must be > 0");
  if (!(std::abs(c.bridge.rref_ohm) > 0) || !std::isfinite(std::abs(c.bridge.rref_ohm)))
    throw std::invalid_argument("reference resistor must be > 0 ohm");
  if (!(c.rref_tolerance_rel >= 0 && c.rref_tolerance_rel < 0.5))
    throw std::invalid_argument("reference tolerance must be between 0 and 50 %");
  if (!(c.rref_tempco_ppm_per_k >= 0 && c.rref_temp_span_k >= 0 && c.rref_inductance_h >= 0))
    throw std::invalid_argument("reference tempco, temperature span and inductance must be >= 0");
  if (!(c.volts_per_fs >= 0)) throw std::invalid_argument("volts per full scale must be >= 0");
  if (c.target_blocks < 2) throw std::invalid_argument("target blocks must be >= 2");
  if (na != nb) throw std::invalid_argument("the two channels differ in length");
}

// Distance of x from the nearest integer.
double off_integer(double x) {
  return std::abs(x - std::round(x));
}

struct BlockLayout {
  std::size_t len = 0;
  std::size_t count = 0;
  bool coherent = false;
};

// Whole periods of every tone in one block give an exact rectangular lock-in. Search
// outwards from the block length that yields the target number of blocks.
BlockLayout choose_blocks(std::span<const double> freqs, double fs, std::size_t span_len,
                          std::size_t target_blocks) {
  const double f_min = *std::min_element(freqs.begin(), freqs.end());
  double sep_min = std::numeric_limits<double>::infinity();
  for (std::size_t i = 0; i < freqs.size(); ++i)
    for (std::size_t j = i + 1; j < freqs.size(); ++j)
      sep_min = std::min(sep_min, std::abs(freqs[i] - freqs[j]));
  // Hann needs room: >= 8 periods of the lowest tone, >= 8 bins between tones.
  double hann_min = 8 * fs / f_min;
  if (std::isfinite(sep_min) && sep_min > 0) hann_min = std::max(hann_min, 8 * fs / sep_min);
  const auto l_hann = static_cast<std::size_t>(std::ceil(hann_min));
  const std::size_t l_target = std::max<std::size_t>(span_len / target_blocks, 16);
  const std::size_t l_lo = std::max<std::size_t>(
      static_cast<std::size_t>(std::ceil(2 * fs / f_min)), span_len / (4 * target_blocks));
  const std::size_t l_hi = span_len / 2;
  auto coherent = [&](std::size_t len) {
    for (double f : freqs) {
      const double cycles = f * static_cast<double>(len) / fs;
      if (cycles < 1 || off_integer(cycles) > 1e-4) return false;
    }
    return true;
  };
  // Candidates alternate above and below the target until both directions leave the range.
  for (std::size_t d = 0;; ++d) {
    const std::size_t up = l_target + d;
    const bool up_in = up <= l_hi;
    const bool down_in = d <= l_target && l_target - d >= l_lo;
    if (!up_in && !down_in) break;
    if (up_in && up >= l_lo && coherent(up)) return {up, span_len / up, true};
    if (down_in && d > 0 && l_target - d <= l_hi && coherent(l_target - d))
      return {l_target - d, span_len / (l_target - d), true};
  }
  const std::size_t len = std::max(l_target, l_hann);
  return {len, span_len / len, false};
}

struct ToneBlocks {
  std::vector<cplx> a, b;
  std::vector<std::size_t> starts;
};

// Demodulates every block at a frequency that may change linearly with time (the phase
// tracking model); time is measured from t_mid seconds.
ToneBlocks demodulate_blocks(std::span<const double> a, std::span<const double> b,
                             std::size_t begin, const BlockLayout& layout, Window window, double fs,
                             double freq_hz, double slope_hz_per_s, double t_mid) {
  ToneBlocks out;
  const std::vector<double> w =
      window == Window::rectangular ? std::vector<double>{} : make_window(window, layout.len);
  const double sum_w =
      w.empty() ? static_cast<double>(layout.len) : std::accumulate(w.begin(), w.end(), 0.0);
  for (std::size_t i = 0; i < layout.count; ++i) {
    const std::size_t start = begin + i * layout.len;
    const double t_centre =
        (static_cast<double>(start) + 0.5 * static_cast<double>(layout.len)) / fs;
    const double f = freq_hz + slope_hz_per_s * (t_centre - t_mid);
    cplx va, vb;
    demodulate(a.subspan(start, layout.len), b.subspan(start, layout.len), w, 2.0 / sum_w, f, fs,
               start, va, vb);
    out.a.push_back(va);
    out.b.push_back(vb);
    out.starts.push_back(start);
  }
  return out;
}

cplx mean_of(std::span<const cplx> v) {
  cplx s;
  for (auto x : v)
    s += x;
  return v.empty() ? s : s / static_cast<double>(v.size());
}

// Sensitivity of Z to a relative change of one bridge input, by a one-sided difference.
cplx sensitivity(const BridgeConfig& base, cplx ratio, const auto& perturb) {
  constexpr double h = 1e-7;
  BridgeConfig changed = base;
  perturb(changed, h);
  return (solve_bridge(changed, 1.0, ratio) - solve_bridge(base, 1.0, ratio)) / h;
}

}  // namespace

AnalysisResult analyze_recording(std::span<const double> a, std::span<const double> b,
                                 const AnalysisConfig& config) {
  validate(config, a.size(), b.size());
  const double fs = config.sample_rate_hz;
  AnalysisResult result;
  result.sample_rate_hz = fs;
  result.duration_s = static_cast<double>(a.size()) / fs;

  for (auto [x, name] : {std::pair{a, "channel 1 (node A)"}, std::pair{b, "channel 2 (node B)"}}) {
    const auto clip = detect_clipping(x);
    if (clip.clipped_runs > 0) {
      throw AnalysisError("recording.clipped",
                          std::string(name) + " is clipped (" + std::to_string(clip.clipped_runs) +
                              " flat-topped peaks)",
                          "lower the output level or the input gain and record again");
    }
  }

  const auto region = find_active_region(a, {.sample_rate_hz = fs});
  if (!region.found) {
    const auto other = find_active_region(b, {.sample_rate_hz = fs});
    throw AnalysisError("recording.silent", "channel 1 (node A) carries no signal",
                        other.found ? "the tone is on channel 2 only: if node A was recorded on "
                                      "channel 2, pass --swap"
                                    : "check that the generator played and the recording "
                                      "input was the jig");
  }
  result.active_begin = region.begin;
  result.active_end = region.end;
  const std::size_t span_len = region.end - region.begin;
  const auto seg_a = a.subspan(region.begin, span_len);
  const auto seg_b = b.subspan(region.begin, span_len);
  if (span_len < 256) {
    throw AnalysisError(
        "recording.too_short",
        "the steady tone lasts only " + fmt(static_cast<double>(span_len) / fs) + " s",
        "record at least 0.2 s of steady tone");
  }

  // Tones: every tone on channel A is found and refined in one joint fit, so no tone
  // biases another's frequency; named frequencies only select which ones are reported.
  // The block length is chosen for all of them, so an unreported tone cannot leak into a
  // reported one through a window that is coherent for the latter only.
  std::vector<double> all_freqs;  // every excitation tone present
  std::vector<double> freqs;      // the ones to report
  double floor_per_sample = 0;    // noise floor scaled to a one-sample transform
  {
    ToneSearchConfig search{.sample_rate_hz = fs, .min_level_db = config.min_tone_db};
    const auto found = detect_tones(seg_a, search);
    result.harmonics_dropped = found.harmonics_dropped;
    floor_per_sample =
        found.floor * std::sqrt(static_cast<double>(std::min(span_len, search.max_fft)));
    for (const auto& t : found.tones)
      all_freqs.push_back(t.freq_hz);
    if (all_freqs.empty()) {
      throw AnalysisError("recording.no_tone", "no excitation tone found on channel 1 (node A)",
                          "the recording holds only noise: check the generator level and that "
                          "channel 1 is wired to node A");
    }
    if (all_freqs.size() <= 12) {
      // The fit leaves out the edges of the active part (a fade-in or fade-out there would
      // bias the frequency) when enough remains: 10 % or 50 ms at each end.
      const auto edge = std::max<std::size_t>(span_len / 10, static_cast<std::size_t>(0.05 * fs));
      const auto fit_seg = 4 * edge < span_len ? seg_a.subspan(edge, span_len - 2 * edge) : seg_a;
      const auto fit = fit_sines(fit_seg, all_freqs, {.sample_rate_hz = fs});
      const double guard = 2 * found.bin_hz;
      for (std::size_t k = 0; k < all_freqs.size(); ++k) {
        if (fit.converged && std::abs(fit.freq_hz[k] - all_freqs[k]) < guard)
          all_freqs[k] = fit.freq_hz[k];
      }
    }
    for (double want : config.tones_hz) {
      if (!(want > 0 && want < 0.5 * fs)) {
        throw AnalysisError("analysis.bad_frequency",
                            fmt(want) + " Hz is outside 0 < f < " + fmt(0.5 * fs) + " Hz",
                            "name a frequency below half the sample rate");
      }
      const auto nearest = std::min_element(
          all_freqs.begin(), all_freqs.end(),
          [&](double p, double q) { return std::abs(p - want) < std::abs(q - want); });
      if (std::abs(*nearest - want) > 4 * found.bin_hz) {
        throw AnalysisError("recording.no_tone", "no tone near " + fmt(want) + " Hz on channel 1",
                            "check the frequency, lower --min-tone-db for a weak tone, or leave "
                            "out --freq to find tones automatically");
      }
      if (std::find(freqs.begin(), freqs.end(), *nearest) == freqs.end()) freqs.push_back(*nearest);
    }
    if (config.tones_hz.empty()) freqs = all_freqs;
  }

  const BlockLayout layout = choose_blocks(all_freqs, fs, span_len, config.target_blocks);
  if (layout.count < 2) {
    const double need = 2.0 * static_cast<double>(layout.len) / fs;
    throw AnalysisError("recording.too_short",
                        "the steady tone lasts " + fmt(static_cast<double>(span_len) / fs) +
                            " s, too short for two analysis blocks at " +
                            fmt(*std::min_element(freqs.begin(), freqs.end())) + " Hz",
                        "record at least " + fmt(need + 0.1, 3) + " s of steady tone");
  }
  const Window window =
      config.window.value_or(layout.coherent ? Window::rectangular : Window::hann);
  const double t_mid =
      (static_cast<double>(region.begin) + 0.5 * static_cast<double>(layout.count * layout.len)) /
      fs;
  const double record_s = static_cast<double>(layout.count * layout.len) / fs;

  for (double freq0 : freqs) {
    ToneReading r;
    r.coherent = layout.coherent;
    r.window = window;
    r.block_len = layout.len;
    r.blocks_total = layout.count;
    double freq = freq0, slope = 0;
    ToneBlocks blocks;
    // Track the phase drift of channel A: each pass demodulates with the frequency model
    // of the last; two passes normally suffice, the third only confirms.
    for (int pass = 0; pass < 3; ++pass) {
      blocks = demodulate_blocks(a, b, region.begin, layout, window, fs, freq, slope, t_mid);
      // Only the settled blocks tell the frequency: fades and start-up transients do not.
      std::vector<cplx> ratio_now(blocks.a.size());
      for (std::size_t i = 0; i < ratio_now.size(); ++i)
        ratio_now[i] = blocks.b[i] / blocks.a[i];
      const auto steady = check_settled(ratio_now, {});
      std::size_t s_first = steady.first, s_count = steady.last - steady.first;
      if (s_count < 3) {
        s_first = 0;
        s_count = blocks.a.size();
      }
      r.phase = measure_phase_drift(
          std::span<const cplx>(blocks.a).subspan(s_first, s_count),
          std::span<const std::size_t>(blocks.starts).subspan(s_first, s_count), layout.len, fs);
      const double cycles_off = std::abs(r.phase.freq_error_hz) * record_s +
                                std::abs(r.phase.freq_slope_hz_per_s) * record_s * record_s;
      if (cycles_off < 1e-4) break;
      freq += r.phase.freq_error_hz;
      slope += r.phase.freq_slope_hz_per_s;
    }
    // Phase noise expected per block from the spectrum's noise floor, not from the block
    // spread: a wandering tone inflates the spread itself and would excuse its own wander.
    const double level = std::abs(block_spread(blocks.a).mean);
    const double noise_rad =
        level > 0 ? floor_per_sample / std::sqrt(static_cast<double>(layout.len)) / level : 1.0;
    if (r.phase.residual_rad > std::max(0.3, 5 * noise_rad) ||
        std::abs(slope) * record_s > 0.02 * freq) {
      throw AnalysisError(
          "recording.clock_wander",
          "the tone near " + fmt(freq, 6) + " Hz wanders (phase residual " +
              fmt(r.phase.residual_rad, 2) + " rad, frequency change " + fmt(slope * record_s, 3) +
              " Hz over the recording)",
          "record with output and input on one device clock, or use a shorter recording");
    }
    ToneReading done = reading_from_blocks(blocks.a, blocks.b, freq, config);
    done.coherent = r.coherent;
    done.window = r.window;
    done.block_len = r.block_len;
    done.blocks_total = r.blocks_total;
    done.phase = r.phase;
    r = std::move(done);
    result.readings.push_back(std::move(r));
  }
  std::sort(result.readings.begin(), result.readings.end(),
            [](const auto& p, const auto& q) { return p.freq_hz < q.freq_hz; });

  // A reactance that changes sign between neighbouring tones means a self-resonance.
  for (std::size_t i = 1; i < result.readings.size(); ++i) {
    const auto& lo = result.readings[i - 1];
    const auto& hi = result.readings[i];
    if (!lo.x_below_resolution && !hi.x_below_resolution &&
        (lo.values.x_ohm > 0) != (hi.values.x_ohm > 0)) {
      result.notes.push_back("self-resonance between " + fmt(lo.freq_hz) + " Hz and " +
                             fmt(hi.freq_hz) + " Hz (reactance changes sign)");
    }
  }
  return result;
}

ToneReading reading_from_blocks(std::span<const cplx> block_a, std::span<const cplx> block_b,
                                double freq, const AnalysisConfig& config) {
  if (block_a.size() != block_b.size() || block_a.empty())
    throw std::invalid_argument("reading_from_blocks: one or more blocks, as many for A as for B");
  ToneReading r;
  r.freq_hz = freq;
  r.blocks_total = block_a.size();

  // Per-block ratios: the settling check, the swapped-inputs check and the Type A of r.
  std::vector<cplx> ratio(block_a.size());
  for (std::size_t i = 0; i < ratio.size(); ++i)
    ratio[i] = block_b[i] / block_a[i];
  // For any passive part |V_B/V_A| < 1 in both layouts (|Z + Rref| > |Z| when Re Z >= 0),
  // so node B reading well above node A means the inputs are the other way round. The
  // margin leaves room for an uncalibrated gain mismatch (two inputs +-0.3 dB each).
  const double corrected = std::abs(mean_of(ratio) / config.bridge.channel_match);
  if (config.check_swapped && corrected > 1.10) {
    throw AnalysisError("analysis.channels_swapped",
                        "at " + fmt(freq, 6) + " Hz channel 2 reads " + fmt(corrected, 3) +
                            " times channel 1, which no passive part can do",
                        "node A seems to be on channel 2: pass --swap (or check the wiring)");
  }
  r.settle = check_settled(ratio, {});
  const std::size_t first = r.settle.first;
  const std::size_t last = std::max(r.settle.last, first);
  r.blocks_used = last - first;
  if (r.blocks_used == 0) {
    r.settle.first = 0;
    r.settle.last = ratio.size();
    r.blocks_used = ratio.size();
  }
  const auto used = [&](std::span<const cplx> v) {
    return std::span<const cplx>(v).subspan(r.settle.first, r.blocks_used);
  };
  BridgeConfig bridge = config.bridge;
  if (config.input_load) bridge.input_impedance_ohm = config.input_load->at(freq);
  std::vector<cplx> z_blocks;
  try {
    for (std::size_t i = r.settle.first; i < r.settle.first + r.blocks_used; ++i)
      z_blocks.push_back(solve_bridge(bridge, block_a[i], block_b[i]));
  } catch (const std::domain_error&) {
    throw AnalysisError(
        "analysis.bridge_singular",
        "at " + fmt(freq, 6) + " Hz node B reads the same as " +
            std::string(config.bridge.layout == Layout::part_low ? "node A" : "ground"),
        config.bridge.layout == Layout::part_low
            ? "the part is open or missing: check the connection"
            : "the part is open or node B is shorted to ground: check the jig");
  }
  r.z = mean_with_type_a(z_blocks);
  r.ratio = mean_of(used(ratio));
  {
    const auto spread = block_spread(used(ratio));
    r.ratio_u_rel = spread.n > 1 ? spread.spread / std::sqrt(static_cast<double>(spread.n)) /
                                       std::abs(spread.mean)
                                 : 0.0;
  }

  // Type B inputs, by sensitivity of the bridge solution at the mean ratio.
  const BridgeConfig& bc = bridge;
  if (config.rref_tolerance_rel > 0) {
    r.z.type_b.push_back(
        {"rref_tolerance",
         sensitivity(bc, r.ratio, [](BridgeConfig& c, double h) { c.rref_ohm *= 1 + h; }),
         rectangular_u(config.rref_tolerance_rel), 1e9, true});
  }
  // Temperature: the same relative change of Rref as its tolerance, hence the same
  // sensitivity; half-width tempco * span.
  const double tempco_half_width = config.rref_tempco_ppm_per_k * 1e-6 * config.rref_temp_span_k;
  if (tempco_half_width > 0) {
    r.z.type_b.push_back(
        {"rref_tempco",
         sensitivity(bc, r.ratio, [](BridgeConfig& c, double h) { c.rref_ohm *= 1 + h; }),
         rectangular_u(tempco_half_width)});
  }
  // Series inductance of Rref: a reactance j w L in series with it. The step is taken as a
  // small reactance relative to |Rref| (h |Rref| ohm, i.e. h |Rref| / w henry), then scaled
  // to ohm per henry.
  if (config.rref_inductance_h > 0) {
    const double w = 2 * std::numbers::pi * freq;
    const double mag = std::abs(bc.rref_ohm);
    r.z.type_b.push_back(
        {"rref_reactance",
         sensitivity(bc, r.ratio,
                     [mag](BridgeConfig& c, double h) { c.rref_ohm += cplx(0, h * mag); }) *
             (w / mag),
         rectangular_u(config.rref_inductance_h)});
  }
  if (bc.input_impedance_ohm && config.input_impedance_u_rel > 0) {
    r.z.type_b.push_back(
        {"input_impedance",
         sensitivity(bc, r.ratio,
                     [](BridgeConfig& c, double h) { *c.input_impedance_ohm *= 1 + h; }),
         config.input_impedance_u_rel});
  }
  // The channel match's own scatter and its interpolation between calibration
  // frequencies move Z through the same two sensitivities (gain, phase of H).
  if (config.channel_gain_u_rel > 0 || config.channel_interp_gain_u_rel > 0) {
    const auto s_gain =
        sensitivity(bc, r.ratio, [](BridgeConfig& c, double h) { c.channel_match *= 1 + h; });
    if (config.channel_gain_u_rel > 0)
      r.z.type_b.push_back({"channel_match_gain", s_gain, config.channel_gain_u_rel});
    if (config.channel_interp_gain_u_rel > 0)
      r.z.type_b.push_back({"interpolation_gain", s_gain, config.channel_interp_gain_u_rel});
  }
  if (config.channel_phase_u_rad > 0 || config.channel_interp_phase_u_rad > 0) {
    const auto s_phase = sensitivity(
        bc, r.ratio, [](BridgeConfig& c, double h) { c.channel_match *= std::polar(1.0, h); });
    if (config.channel_phase_u_rad > 0)
      r.z.type_b.push_back({"channel_match_phase", s_phase, config.channel_phase_u_rad});
    if (config.channel_interp_phase_u_rad > 0)
      r.z.type_b.push_back({"interpolation_phase", s_phase, config.channel_interp_phase_u_rad});
  }

  update_derived(r, config.force_kind);

  const auto sa = block_spread(used(block_a));
  const auto sb = block_spread(used(block_b));
  r.level_a = std::abs(sa.mean);
  r.level_b = std::abs(sb.mean);
  r.snr_a_db = sa.snr_db;
  r.snr_b_db = sb.snr_db;
  if (config.volts_per_fs > 0) {
    const cplx v_part = config.bridge.layout == Layout::part_low ? sb.mean : sa.mean - sb.mean;
    r.v_part_rms = std::abs(v_part) * config.volts_per_fs / std::numbers::sqrt2;
    r.i_part_rms = r.v_part_rms / std::max(r.values.mag_ohm, 1e-300);
  }
  return r;
}

void update_derived(ToneReading& r, std::optional<PartKind> force_kind) {
  r.values = derive(r.z.value, r.freq_hz);
  const double f = r.freq_hz;
  const auto& z = r.z;
  r.u_r = propagate(z, [](cplx v) { return v.real(); });
  r.u_x = propagate(z, [](cplx v) { return v.imag(); });
  r.u_mag = propagate(z, [](cplx v) { return std::abs(v); });
  r.u_theta_deg = propagate(z, [](cplx v) { return std::arg(v) * 180 / std::numbers::pi; });
  r.u_cs = propagate(z, [f](cplx v) { return derive(v, f).cs_f; });
  r.u_cp = propagate(z, [f](cplx v) { return derive(v, f).cp_f; });
  r.u_ls = propagate(z, [f](cplx v) { return derive(v, f).ls_h; });
  r.u_lp = propagate(z, [f](cplx v) { return derive(v, f).lp_h; });
  // Signed forms for the losses, so a value near zero propagates linearly (u(D) =
  // u(R)/|X| at R = 0) instead of through the kink of |R|.
  r.u_d = propagate(z, [](cplx v) { return v.real() / std::abs(v.imag()); });
  r.u_q = propagate(z, [](cplx v) { return std::abs(v.imag()) / v.real(); });
  r.u_rp = propagate(z, [](cplx v) { return std::norm(v) / v.real(); });
  r.r_below_resolution = std::abs(r.values.r_ohm) <= r.u_r.expanded;
  r.x_below_resolution = std::abs(r.values.x_ohm) <= r.u_x.expanded;
  r.kind_forced = force_kind.has_value();
  r.kind = force_kind.value_or(detect_kind(r.z.value, r.u_x.expanded));
}

}  // namespace tb::dsp
