// Finding the calibrations a reading uses: old ones called stale, and a card whose level
// was changed since its open/short steps called drifted (on the simulated bench).
#include "server/calibration_data.hpp"

#include <catch2/catch.hpp>
#include <cmath>

#include "server/bench_procedure.hpp"
#include "server/simulated_card.hpp"
#include "tests/support/signals.hpp"

using namespace tb;

namespace {

const CalibrationKey kKey{"simulated", 48000, "part-low", 1000};

CalibrationRecord record(const std::string& kind, nlohmann::json points) {
  CalibrationRecord c;
  c.kind = kind;
  c.device = kKey.device;
  c.sample_rate_hz = kKey.sample_rate_hz;
  c.layout = kKey.layout;
  c.rref_ohm = kKey.rref_ohm;
  c.body = {{"points", std::move(points)}};
  return c;
}

bool has(const Corrections& c, const std::string& id) {
  for (const auto& n : c.missing)
    if (n.id == id) return true;
  return false;
}

}  // namespace

TEST_CASE("hours between two stored times", "[calibration_data]") {
  CHECK(hours_between("2026-12-01T10:00:00.000Z", "2026-12-02T11:30:00.000Z") == Approx(25.5));
  CHECK(std::isnan(hours_between("yesterday", "2026-12-02T11:30:00.000Z")));
}

TEST_CASE("a calibration older than the limit is applied and called stale", "[calibration_data]") {
  Store store(test::make_temp_dir("caldata") + "/t.db");
  store.add_calibration(
      record("channel_match", {{{"freq_hz", 1000}, {"h_re", 1.01}, {"h_im", 0}}}));
  const auto taken = store.calibrations(1).at(0).taken_at;
  CorrectionPolicy fresh{.max_age_h = 24, .now_iso = taken};
  auto c = find_corrections(store, kKey, 1000, fresh);
  REQUIRE(c.match);
  CHECK_FALSE(has(c, "calibration.stale"));
  // The same calibration two days on.
  auto day = std::stoi(taken.substr(8, 2));
  std::string later = taken;
  later.replace(8, 2, (day + 2 < 10 ? "0" : "") + std::to_string(day + 2));
  if (day > 26) later = "2099-01-01T00:00:00.000Z";
  c = find_corrections(store, kKey, 1000, {.max_age_h = 24, .now_iso = later});
  REQUIRE(c.match);
  CHECK(c.match->h.real() == 1.01);
  CHECK(has(c, "calibration.stale"));
}

TEST_CASE("a card turned up since its open and short steps reads as drifted",
          "[calibration_data]") {
  // 4.7 kohm on 1 kohm: the card's output is barely loaded, so the node-A level check can
  // judge it. Open and short are measured on the simulated bench and stored as the service
  // stores them, then the same card is read as it is, and with its output 1 dB hotter
  // (a touched volume control).
  SimulatedBenchConfig cfg;
  cfg.card = dsp::draw_card_faults({.seed = 5});
  cfg.jig.rref_ohm = 1000;
  const dsp::Netlist part = {{{dsp::ElementKind::resistor, "R", "p", "n", 4700}}};
  cfg.part = part;
  MeasureRequest req;
  req.freq_hz = 1000;
  req.rref_ohm = 1000;
  req.duration_s = 0.2;
  auto point = [&](SimulatedCard& card, const dsp::Netlist& on_jig) {
    card.reconnect(cfg.jig, on_jig);
    const auto r = measure_once(card, req, std::nullopt);
    auto p = impedance_point(1000, r.reading.z);
    p["a_per_fs"] = r.reading.level_a / r.level_fs;
    return p;
  };
  Store store(test::make_temp_dir("caldrift") + "/t.db");
  {
    SimulatedCard card(cfg);
    store.add_calibration(record("open", {point(card, open_jig())}));
    store.add_calibration(record("short", {point(card, shorted_jig())}));
  }
  const auto corr = find_corrections(store, kKey, 1000, {.now_iso = utc_now_iso()});
  REQUIRE(corr.source);
  auto read = [&](double output_gain) {
    auto faults = cfg;
    faults.card.dac_full_scale_v *= output_gain;
    SimulatedCard card(faults);
    card.reconnect(cfg.jig, part);
    auto r = measure_once(card, req, std::nullopt, corr.fixture);
    std::vector<ReadingNotice> notices;
    check_level_drift(corr, r, req, notices);
    return notices;
  };
  CHECK(read(1.0).empty());
  const auto turned_up = read(std::pow(10, 1.0 / 20));
  REQUIRE(turned_up.size() == 1);
  CHECK(turned_up[0].id == "calibration.drifted");
  CHECK(turned_up[0].message.find("1.0") != std::string::npos);  // "1.00 dB"
}

TEST_CASE("a calibration of another device or sample rate is named and not applied",
          "[calibration_data]") {
  Store store(test::make_temp_dir("calother") + "/t.db");
  auto other_rate = record("channel_match", {{{"freq_hz", 1000}, {"h_re", 1.02}, {"h_im", 0}}});
  other_rate.sample_rate_hz = 96000;
  store.add_calibration(other_rate);
  auto c = find_corrections(store, kKey, 1000, {.now_iso = utc_now_iso()});
  CHECK_FALSE(c.match);
  REQUIRE(has(c, "calibration.no_channel_match"));
  CHECK(c.missing.at(0).message.find("96 kHz") != std::string::npos);
  CHECK(c.missing.at(0).message.find("not applied") != std::string::npos);

  auto other_device = record("channel_match", {{{"freq_hz", 1000}, {"h_re", 1.03}, {"h_im", 0}}});
  other_device.device = "usb-interface-2";
  store.add_calibration(other_device);
  c = find_corrections(store, kKey, 1000, {.now_iso = utc_now_iso()});
  CHECK_FALSE(c.match);
  CHECK(c.missing.at(0).message.find("usb-interface-2") != std::string::npos);

  // Its own set-up's calibration is applied, whatever else is stored.
  store.add_calibration(
      record("channel_match", {{{"freq_hz", 1000}, {"h_re", 1.01}, {"h_im", 0}}}));
  c = find_corrections(store, kKey, 1000, {.now_iso = utc_now_iso()});
  REQUIRE(c.match);
  CHECK(c.match->h.real() == 1.01);
  CHECK_FALSE(has(c, "calibration.no_channel_match"));
}
