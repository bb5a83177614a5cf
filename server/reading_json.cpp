#include "server/reading_json.hpp"

#include <cmath>

namespace tb {

namespace {

nlohmann::json number(double v) {
  return std::isfinite(v) ? nlohmann::json(v) : nlohmann::json();
}

nlohmann::json expanded(const dsp::ScalarUncertainty& u) {
  return number(u.expanded);
}

}  // namespace

nlohmann::json to_json(const dsp::ToneReading& r) {
  const auto& v = r.values;
  // ESR is never reported negative: a reading that noise pushed below zero is within
  // resolution of zero, and says so.
  const double esr = r.r_below_resolution ? std::max(v.r_ohm, 0.0) : v.r_ohm;
  nlohmann::json j = {
      {"freq_hz", r.freq_hz},
      {"kind", std::string(dsp::part_kind_name(r.kind))},
      {"kind_forced", r.kind_forced},
      {"z_real_ohm", r.z.value.real()},
      {"z_imag_ohm", r.z.value.imag()},
      {"z_mag_ohm", v.mag_ohm},
      {"theta_deg", v.theta_deg},
      {"rs_ohm", esr},
      {"esr_ohm", esr},
      {"esr_below_resolution", r.r_below_resolution},
      {"xs_ohm", v.x_ohm},
      {"cs_f", v.cs_f},
      {"cp_f", v.cp_f},
      {"ls_h", v.ls_h},
      {"lp_h", v.lp_h},
      {"rp_ohm", number(v.rp_ohm)},
      {"d", number(v.d)},
      {"q", number(v.q)},
      {"uncertainty",
       {{"coverage_probability", 0.9545},
        {"k", r.u_mag.k},
        {"nu_eff", number(r.u_mag.nu_eff)},
        {"z_real_ohm", expanded(r.u_r)},
        {"z_imag_ohm", expanded(r.u_x)},
        {"z_mag_ohm", expanded(r.u_mag)},
        {"theta_deg", expanded(r.u_theta_deg)},
        {"cs_f", expanded(r.u_cs)},
        {"cp_f", expanded(r.u_cp)},
        {"ls_h", expanded(r.u_ls)},
        {"lp_h", expanded(r.u_lp)},
        {"rp_ohm", expanded(r.u_rp)},
        {"d", expanded(r.u_d)},
        {"q", expanded(r.u_q)}}},
      {"test_voltage_vrms", r.v_part_rms > 0 ? nlohmann::json(r.v_part_rms) : nlohmann::json()},
      {"test_current_arms", r.i_part_rms > 0 ? nlohmann::json(r.i_part_rms) : nlohmann::json()},
      {"level_a_fs", r.level_a},
      {"level_b_fs", r.level_b},
      {"snr_a_db", r.snr_a_db},
      {"snr_b_db", r.snr_b_db},
      {"window", std::string(dsp::window_name(r.window))},
      {"coherent", r.coherent},
      {"block_len", r.block_len},
      {"blocks_total", r.blocks_total},
      {"blocks_used", r.blocks_used},
      {"settled", r.settle.verdict == dsp::SettleVerdict::settled},
      {"settle", std::string(dsp::settle_verdict_name(r.settle.verdict))},
      {"drift_rel", r.settle.drift_rel},
      {"phase_residual_rad", r.phase.residual_rad},
  };
  nlohmann::json budget = nlohmann::json::array();
  budget.push_back({{"name", "type_a"},
                    {"dof", r.z.dof_a},
                    {"u_real_ohm", std::sqrt(r.z.type_a.rr)},
                    {"u_imag_ohm", std::sqrt(r.z.type_a.ii)}});
  for (const auto& t : r.z.type_b) {
    budget.push_back({{"name", t.name},
                      {"u", t.u},
                      {"u_real_ohm", std::abs(t.sensitivity.real() * t.u)},
                      {"u_imag_ohm", std::abs(t.sensitivity.imag() * t.u)}});
  }
  j["uncertainty"]["budget"] = budget;
  return j;
}

nlohmann::json to_json(const dsp::AnalysisResult& result) {
  nlohmann::json readings = nlohmann::json::array();
  for (const auto& r : result.readings)
    readings.push_back(to_json(r));
  return {{"sample_rate_hz", result.sample_rate_hz},
          {"duration_s", result.duration_s},
          {"active_begin_s", static_cast<double>(result.active_begin) / result.sample_rate_hz},
          {"active_end_s", static_cast<double>(result.active_end) / result.sample_rate_hz},
          {"harmonics_dropped", result.harmonics_dropped},
          {"readings", readings},
          {"notes", result.notes}};
}

nlohmann::json to_json(const MeasureResult& result, const MeasureRequest& request) {
  nlohmann::json j = to_json(result.reading);
  j["requested_hz"] = result.requested_hz;
  j["layout"] = std::string(dsp::layout_name(request.layout));
  j["rref_ohm"] = request.rref_ohm;
  j["rref_tolerance_pct"] = request.rref_tolerance_rel * 100;
  j["channel_match"] = result.channel_match.has_value();
  j["swap_averaged"] = result.swap_averaged;
  j["open_short"] = result.fixture_compensated;
  j["output_level_fs"] = result.level_fs;
  j["requested_level_fs"] = request.level_fs;  // 0 = automatic
  j["level_limited_by"] = std::string(dsp::level_limit_name(result.level_limited_by));
  j["part_class"] = std::string(dsp::part_class_name(request.part_class));
  j["indicative"] = result.indicative;
  j["advice"] = {{"change", result.advice.better_than_present},
                 {"rref_ohm", result.advice.rref_ohm},
                 {"layout", std::string(dsp::layout_name(result.advice.layout))},
                 {"u_now_pct", result.advice.u_now_rel * 100},
                 {"u_advised_pct", result.advice.u_advised_rel * 100},
                 {"text", result.advice.text}};
  j["warnings"] = nlohmann::json::array();
  for (const auto& n : result.notices)
    j["warnings"].push_back(to_json(n));
  return j;
}

nlohmann::json to_json(const ReadingNotice& notice) {
  return {{"id", notice.id}, {"message", notice.message}, {"hint", notice.hint}};
}

}  // namespace tb
