#include "server/demo_scenario.hpp"

#include "server/store.hpp"

namespace tb {

namespace {

const std::vector<JobRecord>& demo_jobs() {
  static const std::vector<JobRecord> jobs{
      {0, "", "Marlowe Acoustics", "Tessera 3 (three-way floorstander, left cabinet)", "LLA-26-130",
       "Customer reports a dull top end after a house move. Check the tweeter high-pass "
       "capacitor and the mid-range coil before re-using them."},
      {0, "", "Quillon Audio", "QI-260 integrated amplifier", "LLA-26-131",
       "Hum at idle and a crackle on the left channel. Discharge the supply first; check the "
       "main filter capacitor and the left coupling capacitor."},
  };
  return jobs;
}

}  // namespace

const std::vector<TrayPart>& demo_tray() {
  static const std::vector<TrayPart> tray{
      {"LLA-26-130", "C3", "6.8 µF J 250 V", "cap 6.8u esr 0.05 esl 12n",
       "tweeter high-pass film capacitor"},
      {"LLA-26-130", "L2", "0.56 mH", "coil 0.56m r 0.32 cp 40p", "mid-range air-core coil"},
      {"LLA-26-130", "R4", "4R7 J 10 W", "res 4.7 ls 2u", "tweeter padding resistor, wirewound"},
      {"LLA-26-131", "C41", "470 µF 35 V", "cap 470u esr 0.9 leak 50k",
       "supply filter electrolytic, suspected dried out"},
      {"LLA-26-131", "C12", "100n K 400 V", "cap 100n esr 1.5", "left-channel coupling capacitor"},
      // The new parts fitted in place of two of the above.
      {"LLA-26-131", "C41", "470 µF 35 V 105 °C (new)", "cap 470u esr 0.08 leak 2meg",
       "replacement supply filter electrolytic, low ESR", "replacement"},
      {"LLA-26-130", "L2", "0.56 mH (new, 1.0 mm wire)", "coil 0.56m r 0.22 cp 25p",
       "replacement mid-range air-core coil, heavier wire", "replacement"},
  };
  return tray;
}

int seed_demo_jobs(Store& store) {
  if (!store.jobs().empty()) return 0;
  for (const auto& j : demo_jobs()) {
    const auto job_id = store.add_job(j);
    for (const auto& p : demo_tray()) {
      if (p.job != j.serial || p.role != "original") continue;
      PartRecord rec;
      rec.job_id = job_id;
      rec.designator = p.designator;
      rec.marking = p.marking;
      rec.notes = p.note;
      store.add_part(rec);
    }
  }
  return static_cast<int>(demo_jobs().size());
}

nlohmann::json tray_json() {
  nlohmann::json list = nlohmann::json::array();
  for (const auto& p : demo_tray()) {
    list.push_back({{"job", p.job},
                    {"designator", p.designator},
                    {"marking", p.marking},
                    {"part", p.part},
                    {"note", p.note},
                    {"role", p.role}});
  }
  return list;
}

}  // namespace tb
