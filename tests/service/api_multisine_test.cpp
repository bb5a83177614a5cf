// A multisine sweep through the real service: one capture, every tone a reading with its
// own corrections, checked against the part's own impedance and against a stepped sweep.
#include <catch2/catch.hpp>
#include <cmath>
#include <complex>
#include <numbers>

#include "dsp/part_spec.hpp"
#include "server/simulated_card.hpp"
#include "tests/support/service_process.hpp"

using tb::test::ServiceProcess;

namespace {

constexpr const char* kPart = "cap 4.7u esr 0.1";

nlohmann::json sweep(const ServiceProcess& svc, nlohmann::json body) {
  body["start_hz"] = 100;
  body["stop_hz"] = 10000;
  body["points_per_decade"] = 4;
  body["wait"] = true;
  const auto r = svc.post("/api/v1/sweeps", body);
  INFO(r.body);
  REQUIRE(r.status == 201);
  const auto s = r.json();
  REQUIRE(s.at("status") == "complete");
  return svc.get("/api/v1/sweeps/" + std::to_string(s.at("id").get<int>())).json();
}

}  // namespace

TEST_CASE("a multisine sweep reads a known capacitor within its uncertainty", "[service]") {
  ServiceProcess svc({"--sim-part", kPart, "--rref-ohm", "100", "--sim-seed", "5"});
  // Corrections at the sweep's frequencies (100 Hz .. 10 kHz, 4 per decade); the tones of
  // the multisine sit near them, each takes its corrections interpolated at its frequency.
  std::vector<double> freqs;
  for (int i = 0; i <= 8; ++i)
    freqs.push_back(100 * std::pow(10.0, i / 4.0));
  for (const char* kind : {"channel_match", "open", "short"}) {
    const auto r =
        svc.post("/api/v1/calibrations",
                 {{"kind", kind}, {"freqs_hz", freqs}, {"duration_s", 0.2}, {"wait", true}});
    INFO(r.body);
    REQUIRE(r.status == 201);
  }
  const auto ms = sweep(svc, {{"method", "multisine"}, {"periods", 8}, {"level_fs", 0.5}});
  const auto stepped = sweep(svc, {{"duration_s", 0.2}, {"level_fs", 0.5}});
  CHECK(ms.at("params").at("method") == "multisine");
  CHECK(stepped.at("params").at("method") == "stepped");
  const auto& mc = ms.at("columns");
  const auto& sc = stepped.at("columns");
  REQUIRE(mc.at("freq_hz").size() == 9);
  REQUIRE(sc.at("freq_hz").size() == 9);

  // Truth: the part's own netlist solved at the frequency the bench's circuit answers
  // (SimulatedCard::circuit_frequency_hz: its trapezoidal steps shift it slightly).
  const auto part = tb::dsp::parse_part(kPart).netlist;
  int common = 0;
  for (std::size_t i = 0; i < 9; ++i) {
    const double f = mc.at("freq_hz").at(i).get<double>();
    const double truth =
        std::abs(tb::dsp::part_impedance(part, tb::SimulatedCard::circuit_frequency_hz(f, 48000)));
    const double z = mc.at("z_mag_ohm").at(i).get<double>();
    const double u = mc.at("u_z_mag_ohm").at(i).get<double>();
    INFO("multisine at " << f << " Hz: " << z << " ohm, truth " << truth << ", U " << u);
    CHECK(std::abs(z - truth) <= u);
    CHECK(u / truth < 0.01);
    // Stepped and multisine read the same part at (nearly) the same frequency: their
    // difference, scaled to a common frequency by the capacitor's 1/f, within the combined U.
    const double fs_ = sc.at("freq_hz").at(i).get<double>();
    const double zs = sc.at("z_mag_ohm").at(i).get<double>();
    const double us = sc.at("u_z_mag_ohm").at(i).get<double>();
    const double truth_s = std::abs(
        tb::dsp::part_impedance(part, tb::SimulatedCard::circuit_frequency_hz(fs_, 48000)));
    INFO("stepped at " << fs_ << " Hz: " << zs << " ohm, U " << us);
    CHECK(std::abs(z / truth - zs / truth_s) * truth <= std::hypot(u, us * truth / truth_s));
    // Where both land on the same frequency (100 Hz, 1 kHz, 10 kHz), directly.
    if (std::abs(f - fs_) < 1e-6) {
      ++common;
      CHECK(std::abs(z - zs) <= std::hypot(u, us));
    }
  }
  CHECK(common >= 3);
  // The first point carries the multisine's own figures; each reading its tone's level.
  const auto sweep_id = std::to_string(ms.at("id").get<int>());
  const auto exported = svc.get("/api/v1/sweeps/" + sweep_id + "/export").json();
  const auto& first = exported.at("points").at(0);
  const auto& m = first.at("multisine");
  CHECK(m.at("crest_factor").get<double>() > 1.4);
  CHECK(m.at("crest_factor").get<double>() < m.at("schroeder_crest_factor").get<double>() + 1e-9);
  CHECK(m.at("peak_level_fs").get<double>() <= 0.5);
  CHECK(m.at("nonlinearity_db").get<double>() < -40);
  CHECK(m.at("periods") == 8);
  for (const auto& p : exported.at("points")) {
    const double tone = p.at("reading").at("tone_level_fs").get<double>();
    CHECK(tone > 0.01);
    CHECK(tone < 0.5);
    // The tones get the stepped readings' signal notices; on this quiet bench only the one on
    // 100 Hz, a harmonic of the 50 Hz mains, has one.
    INFO(p.at("reading").at("warnings").dump());
    for (const auto& w : p.at("reading").at("warnings")) {
      CHECK(w.at("id") == "signal.near_mains");
      CHECK(p.at("reading").at("freq_hz").get<double>() < 410);
    }
  }
}

TEST_CASE("multisine sweep requests are checked", "[service]") {
  ServiceProcess svc;
  auto bad = svc.post("/api/v1/sweeps", {{"method", "chirp"}});
  CHECK(bad.status == 400);
  CHECK(bad.json().at("error").at("id") == "request.bad_value");
  bad = svc.post("/api/v1/sweeps", {{"periods", 4}});
  CHECK(bad.status == 400);
  bad = svc.post("/api/v1/sweeps", {{"method", "multisine"}, {"periods", 1}});
  CHECK(bad.status == 400);
  CHECK(bad.json().at("error").at("id") == "request.out_of_range");
  bad = svc.post("/api/v1/sweeps", {{"grid", "odd_odd"}});
  CHECK(bad.status == 400);
  bad = svc.post("/api/v1/sweeps", {{"method", "multisine"}, {"grid", "random"}});
  CHECK(bad.status == 400);
}

TEST_CASE("an odd-odd multisine sees a linear part as linear", "[service]") {
  ServiceProcess svc({"--sim-part", "cap 4.7u esr 0.1", "--rref-ohm", "100"});
  const auto r = svc.post("/api/v1/sweeps", {{"start_hz", 100},
                                             {"stop_hz", 10000},
                                             {"points_per_decade", 6},
                                             {"method", "multisine"},
                                             {"grid", "odd_odd"},
                                             {"periods", 4},
                                             {"level_fs", 0.5},
                                             {"wait", true}});
  INFO(r.body);
  REQUIRE(r.status == 201);
  const auto id = std::to_string(r.json().at("id").get<int>());
  const auto full = svc.get("/api/v1/sweeps/" + id + "/export").json();
  REQUIRE(full.at("points").size() == 13);
  const auto m = full.at("points").at(0).at("multisine");
  // A capacitor and a clean simulated card: nothing far above the noise on unexcited bins.
  CHECK(m.at("nonlinearity_db").get<double>() < -40);
  CHECK(full.at("params").at("grid") == "odd_odd");
}

TEST_CASE("a cancelled multisine sweep is kept as cancelled with no points", "[service]") {
  // Real time: 256 periods of 40 ms (100 Hz start, 25 Hz bins) last some 10 s.
  ServiceProcess svc({"--sim-real-time=true"});
  const auto r = svc.post("/api/v1/sweeps", {{"start_hz", 100},
                                             {"stop_hz", 10000},
                                             {"points_per_decade", 4},
                                             {"method", "multisine"},
                                             {"periods", 256}});
  INFO(r.body);
  REQUIRE(r.status == 202);
  int id = 0;
  REQUIRE(tb::test::eventually(
      [&] {
        const auto list = svc.get("/api/v1/sweeps").json().at("sweeps");
        if (list.empty()) return false;
        id = list.at(0).at("id").get<int>();
        return true;
      },
      30));
  const auto path = "/api/v1/sweeps/" + std::to_string(id);
  REQUIRE(svc.post(path + "/cancel", nlohmann::json::object()).status == 202);
  REQUIRE(tb::test::eventually([&] { return svc.get(path).json().at("status") != "running"; }, 30));
  const auto s = svc.get(path).json();
  CHECK(s.at("status") == "cancelled");
  CHECK(s.at("points_saved") == 0);  // one capture: nothing of it is saved
  CHECK(s.at("points_planned") == 9);
}
