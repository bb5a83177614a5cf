#include "server/sweep_fit.hpp"

#include <algorithm>
#include <cmath>
#include <complex>
#include <numbers>

#include "server/error.hpp"

namespace tb {

namespace {

constexpr double kDegToRad = std::numbers::pi / 180;

struct Collector {
  FitInput in;
  std::vector<double> f, u_rel, u_theta;
  std::vector<std::complex<double>> z;

  void add(const nlohmann::json& f_j, const nlohmann::json& re, const nlohmann::json& im,
           const nlohmann::json& u_mag, const nlohmann::json& u_th, double k) {
    if (!f_j.is_number() || !re.is_number() || !im.is_number() || !u_mag.is_number() ||
        !u_th.is_number() || !(k > 0)) {
      ++in.skipped;
      return;
    }
    const std::complex<double> zz(re.get<double>(), im.get<double>());
    const double mag = std::abs(zz);
    const double um = u_mag.get<double>() / k, ut = u_th.get<double>() / k * kDegToRad;
    if (!(f_j.get<double>() > 0) || !std::isfinite(mag) || !(mag > 0) || !(um > 0) || !(ut > 0) ||
        !std::isfinite(um) || !std::isfinite(ut)) {
      ++in.skipped;
      return;
    }
    f.push_back(f_j.get<double>());
    z.push_back(zz);
    u_rel.push_back(um / mag);
    u_theta.push_back(ut);
  }

  // In frequency order: refined sweeps store added points after the planned ones, and the
  // curve method walks the points in order.
  FitInput done() {
    std::vector<std::size_t> order(f.size());
    for (std::size_t i = 0; i < order.size(); ++i)
      order[i] = i;
    std::sort(order.begin(), order.end(), [&](auto a, auto b) { return f[a] < f[b]; });
    std::vector<double> fs, ur, ut;
    std::vector<std::complex<double>> zs;
    for (auto i : order) {
      fs.push_back(f[i]);
      zs.push_back(z[i]);
      ur.push_back(u_rel[i]);
      ut.push_back(u_theta[i]);
    }
    if (!fs.empty()) in.sweep = dsp::sweep_from_polar_u(fs, zs, ur, ut);
    return in;
  }
};

nlohmann::json value_json(const dsp::FitValue& v) {
  return {{"name", v.name}, {"unit", v.unit}, {"value", v.value}, {"u", v.u}};
}

nlohmann::json num(double v) {
  return std::isfinite(v) ? nlohmann::json(v) : nlohmann::json();
}

// The curve to draw: 200 points log spaced over the sweep's range.
nlohmann::json curve_json(const dsp::CircuitFit& fit, double lo, double hi) {
  nlohmann::json c = {{"freq_hz", nlohmann::json::array()},
                      {"z_real_ohm", nlohmann::json::array()},
                      {"z_imag_ohm", nlohmann::json::array()},
                      {"z_mag_ohm", nlohmann::json::array()},
                      {"theta_deg", nlohmann::json::array()}};
  const int n = 200;
  for (int i = 0; i < n; ++i) {
    const double f = lo * std::pow(hi / lo, double(i) / (n - 1));
    const auto z = fit.z_at(f);
    c["freq_hz"].push_back(f);
    c["z_real_ohm"].push_back(num(z.real()));
    c["z_imag_ohm"].push_back(num(z.imag()));
    c["z_mag_ohm"].push_back(num(std::abs(z)));
    c["theta_deg"].push_back(num(std::arg(z) / kDegToRad));
  }
  return c;
}

}  // namespace

FitInput fit_input_from_columns(const nlohmann::json& columns) {
  Collector c;
  const auto col = [&](const char* name) -> const nlohmann::json& {
    static const nlohmann::json empty = nlohmann::json::array();
    const auto it = columns.find(name);
    return it != columns.end() && it->is_array() ? *it : empty;
  };
  const auto& f = col("freq_hz");
  for (std::size_t i = 0; i < f.size(); ++i) {
    auto at = [&](const char* name) {
      const auto& a = col(name);
      return i < a.size() ? a[i] : nlohmann::json();
    };
    c.add(f[i], at("z_real_ohm"), at("z_imag_ohm"), at("u_z_mag_ohm"), at("u_theta_deg"), 2.0);
  }
  return c.done();
}

FitInput fit_input_from_points(const std::vector<nlohmann::json>& bodies) {
  Collector c;
  // A point without a correction most of the sweep has (above the calibration grid, say)
  // is off by the uncorrected channel mismatch, which its own U does not hold: near the
  // Nyquist limit that can be tens of per cent. Such points stay out of the fit.
  auto used = [](const nlohmann::json& r, const char* kind) {
    const auto corr = r.value("corrections", nlohmann::json::object());
    return corr.is_object() && corr.contains(kind);
  };
  std::size_t with_match = 0, with_open = 0, readings = 0;
  for (const auto& b : bodies) {
    const auto r = b.value("reading", nlohmann::json());
    if (!r.is_object()) continue;
    ++readings;
    with_match += used(r, "channel_match") ? 1 : 0;
    with_open += used(r, "open") ? 1 : 0;
  }
  const bool need_match = 2 * with_match > readings, need_open = 2 * with_open > readings;
  for (const auto& b : bodies) {
    const auto r = b.value("reading", nlohmann::json());
    if (!r.is_object()) {
      ++c.in.skipped;
      continue;
    }
    if ((need_match && !used(r, "channel_match")) || (need_open && !used(r, "open"))) {
      ++c.in.skipped;
      ++c.in.uncorrected;
      continue;
    }
    const auto u = r.value("uncertainty", nlohmann::json::object());
    const auto k = u.value("k", nlohmann::json());
    c.add(r.value("freq_hz", nlohmann::json()), r.value("z_real_ohm", nlohmann::json()),
          r.value("z_imag_ohm", nlohmann::json()), u.value("z_mag_ohm", nlohmann::json()),
          u.value("theta_deg", nlohmann::json()), k.is_number() ? k.get<double>() : 2.0);
    const auto v = r.value("test_voltage_vrms", nlohmann::json());
    if (v.is_number()) c.in.drive_v_rms = std::max(c.in.drive_v_rms, v.get<double>());
  }
  return c.done();
}

std::optional<dsp::FitFamily> parse_family(const std::string& text) {
  for (auto f : {dsp::FitFamily::capacitor, dsp::FitFamily::inductor, dsp::FitFamily::resistor,
                 dsp::FitFamily::driver})
    if (text == dsp::fit_family_name(f)) return f;
  if (text == "auto" || text.empty()) return std::nullopt;
  throw Error("request.bad_value", "no part family '" + text + "'",
              "use capacitor, inductor, resistor, driver or auto");
}

nlohmann::json to_json(const dsp::DriverParams& p) {
  return {{"method", p.method},
          {"mounting", p.conditions.mounting},
          {"drive_v_rms", p.conditions.drive_v_rms > 0 ? nlohmann::json(p.conditions.drive_v_rms)
                                                       : nlohmann::json()},
          {"re_ohm", p.re_ohm},
          {"fs_hz", p.fs_hz},
          {"qms", p.qms},
          {"qes", p.qes},
          {"qts", p.qts},
          {"res_ohm", p.res_ohm},
          {"ces_f", p.ces_f},
          {"les_h", p.les_h},
          {"u",
           {{"re_ohm", p.u_re_ohm},
            {"fs_hz", p.u_fs_hz},
            {"qms", p.u_qms},
            {"qes", p.u_qes},
            {"qts", p.u_qts}}},
          {"zmax_ohm", p.zmax_ohm > 0 ? nlohmann::json(p.zmax_ohm) : nlohmann::json()},
          {"f1_hz", p.f1_hz > 0 ? nlohmann::json(p.f1_hz) : nlohmann::json()},
          {"f2_hz", p.f2_hz > 0 ? nlohmann::json(p.f2_hz) : nlohmann::json()}};
}

nlohmann::json fit_json(const FitInput& in, const FitRequest& request) {
  const auto& s = in.sweep;
  nlohmann::json candidates = nlohmann::json::array();
  dsp::CircuitFit fit;
  if (request.model) {
    fit = dsp::fit_model(s, *request.model);
  } else {
    auto sel = dsp::fit_best(s, request.family);
    fit = sel.best;
    for (const auto& c : sel.candidates) {
      candidates.push_back({{"model", std::string(dsp::fit_model_name(c.model))},
                            {"ok", c.ok},
                            {"chi2_reduced", c.ok ? num(c.chi2_reduced) : nlohmann::json()},
                            {"bic", c.ok ? num(c.bic) : nlohmann::json()},
                            {"error", c.ok ? nlohmann::json() : nlohmann::json(c.error_id)}});
    }
  }
  const auto [lo_it, hi_it] = std::minmax_element(s.freq_hz.begin(), s.freq_hz.end());
  const double lo = *lo_it, hi = *hi_it;
  const auto family = dsp::fit_model_family(fit.model);
  nlohmann::json j = {{"model", std::string(dsp::fit_model_name(fit.model))},
                      {"family", std::string(dsp::fit_family_name(family))},
                      {"description", fit.description},
                      {"params", nlohmann::json::array()},
                      {"derived", nlohmann::json::array()},
                      {"srf", fit.srf ? value_json(*fit.srf) : nlohmann::json()},
                      {"chi2_reduced", num(fit.chi2_reduced)},
                      {"dof", fit.dof},
                      {"u_scaled", fit.u_scaled},
                      {"u_coverage", "standard uncertainty, k = 1"},
                      {"candidates", candidates},
                      {"points_used", s.freq_hz.size()},
                      {"points_skipped", in.skipped},
                      {"points_uncorrected", in.uncorrected},
                      {"frequency_range_hz", {lo, hi}},
                      {"curve", curve_json(fit, lo, hi)}};
  for (const auto& p : fit.params)
    j["params"].push_back(value_json(p));
  for (const auto& p : fit.derived)
    j["derived"].push_back(value_json(p));
  nlohmann::json res = {{"freq_hz", nlohmann::json::array()},
                        {"mag_pct", nlohmann::json::array()},
                        {"theta_deg", nlohmann::json::array()}};
  for (std::size_t i = 0; i < fit.freq_hz.size() && i < fit.residual_rel.size(); ++i) {
    // residual_rel = (Zm - Z)/|Z|: its part along Z is the relative |Z| misfit, across it
    // the phase misfit in radians.
    const auto along = fit.residual_rel[i] * std::polar(1.0, -std::arg(s.z_ohm[i]));
    res["freq_hz"].push_back(fit.freq_hz[i]);
    res["mag_pct"].push_back(num(along.real() * 100));
    res["theta_deg"].push_back(num(along.imag() / kDegToRad));
  }
  j["residuals"] = res;
  nlohmann::json notes = nlohmann::json::array();
  notes.push_back("values hold for " + std::to_string(static_cast<int>(std::lround(lo))) +
                  " Hz to " + std::to_string(static_cast<int>(std::lround(hi))) +
                  " Hz, the range of the sweep; a self-resonance outside it is extrapolated");
  if (family == dsp::FitFamily::capacitor) {
    notes.push_back(
        "no leakage resistance: the card's inputs are AC-coupled and cannot see DC leakage");
    notes.push_back(
        "datasheet ESR is often given at 100 kHz, beyond a sound card (it stops near 0.4 of "
        "the sample rate); compare at the frequencies measured here");
  }
  if (in.uncorrected > 0)
    notes.push_back(std::to_string(in.uncorrected) +
                    " point(s) left out: they lack a correction the rest of the sweep has (often "
                    "above the calibration grid, which stops at 0.4 of the sample rate)");
  if (fit.u_scaled)
    notes.push_back(
        "the points scatter about the model more than their uncertainty says; the "
        "parameter uncertainties were widened to match");
  j["notes"] = notes;
  if (family == dsp::FitFamily::driver) {
    dsp::DriverConditions cond = request.conditions;
    if (cond.drive_v_rms <= 0) cond.drive_v_rms = in.drive_v_rms;
    nlohmann::json curve_params;
    try {
      curve_params = to_json(dsp::ts_from_curve(s.freq_hz, s.z_ohm, cond));
    } catch (const dsp::FitError&) {
      curve_params = nullptr;  // no peak with both sides inside the sweep
    }
    j["driver"] = {{"from_fit", to_json(dsp::ts_from_fit(fit, cond))},
                   {"from_curve", curve_params},
                   {"conditions",
                    {{"mounting", cond.mounting},
                     {"drive_v_rms", cond.drive_v_rms > 0 ? nlohmann::json(cond.drive_v_rms)
                                                          : nlohmann::json()}}}};
  }
  return j;
}

}  // namespace tb
