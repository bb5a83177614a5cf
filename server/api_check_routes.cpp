// Routes for part checks and fits: markings decoded, verdicts on readings, matching and
// bag sorting, comparing two sweeps, equivalent-circuit fits of a sweep and a driver's Vas.
#include <httplib.h>

#include <cmath>

#include "dsp/driver_params.hpp"
#include "server/api_request.hpp"
#include "server/api_routes.hpp"
#include "server/error.hpp"
#include "server/part_checks.hpp"
#include "server/store.hpp"
#include "server/sweep_fit.hpp"

namespace tb {

namespace {

nlohmann::json need_reading(const Store& store, std::int64_t id) {
  auto r = store.reading(id);
  if (!r) not_found("reading", id);
  return r->body;
}

std::vector<nlohmann::json> sweep_bodies(const Store& store, std::int64_t id) {
  if (!store.sweep(id)) not_found("sweep", id);
  std::vector<nlohmann::json> out;
  for (const auto& p : store.sweep_points(id))
    out.push_back(p.body);
  return out;
}

std::vector<std::int64_t> ids_of(const nlohmann::json& b, const char* field, std::size_t max) {
  const auto v = api::opt_numbers(b, field);
  if (!v || v->empty()) {
    throw Error("request.missing_field", std::string("field '") + field + "' is required",
                std::string("give a list of ids, e.g. \"") + field + "\": [12, 13]");
  }
  if (v->size() > max) {
    throw Error("request.out_of_range",
                std::string(field) + " holds " + std::to_string(v->size()) + " ids",
                "give at most " + std::to_string(max));
  }
  std::vector<std::int64_t> ids;
  for (double x : *v) {
    if (x != std::floor(x) || x < 1) {
      throw Error("request.bad_type", std::string(field) + " must hold whole ids", "e.g. [12, 13]");
    }
    ids.push_back(static_cast<std::int64_t>(x));
  }
  return ids;
}

ReadingRecord need_record(const Store& store, std::int64_t id) {
  auto r = store.reading(id);
  if (!r) not_found("reading", id);
  return *r;
}

// The marking to judge a reading against: the request's, else its part's.
std::string marking_for(const Store& store, const nlohmann::json& b, const ReadingRecord& reading) {
  if (auto m = api::opt_text(b, "marking")) return *m;
  if (reading.part_id) {
    if (auto p = store.part(*reading.part_id); p && !p->marking.empty()) return p->marking;
  }
  throw Error("request.missing_field", "no marking to judge the reading against",
              "give \"marking\" (e.g. \"4n7 J\"), or file the reading under a part that has one");
}

// A verdict on a reading filed under a part joins the part's history (the job report shows
// it); the reply says which record it became.
void keep_verdict(Store& store, const ReadingRecord& reading, nlohmann::json& verdict) {
  verdict["reading_id"] = reading.id;
  if (!reading.part_id) return;
  verdict["role"] = to_string(reading.role);
  verdict["verdict_id"] = store.add_verdict(*reading.part_id, reading.id, std::nullopt, verdict);
  verdict["part_id"] = *reading.part_id;
}

dsp::DriverParams free_air_params(const Store& store, std::int64_t sweep_id) {
  FitRequest req;
  req.family = dsp::FitFamily::driver;
  const auto j = fit_json(fit_input_from_points(sweep_bodies(store, sweep_id)), req);
  const auto& p = j.at("driver").at("from_fit");
  dsp::DriverParams d;
  d.re_ohm = p.at("re_ohm");
  d.fs_hz = p.at("fs_hz");
  d.qms = p.at("qms");
  d.qes = p.at("qes");
  d.qts = p.at("qts");
  return d;
}

}  // namespace

void add_check_routes(std::vector<Route>& r) {
  r.push_back({"POST", "/api/v1/markings/decode", Access::read,
               "a part's printed marking read as value, tolerance and voltage",
               [](ApiContext&, const httplib::Request& req) {
                 const auto b = api::parse_body(req.body, {"text", "kind"});
                 return ApiReply{200,
                                 marking_json(api::need_text(b, "text"),
                                              parse_kind(api::opt_text(b, "kind").value_or("")))};
               }});
  r.push_back({"POST", "/api/v1/checks/tolerance", Access::change,
               "pass, fail or inconclusive: a reading against its marking's tolerance",
               [](ApiContext& ctx, const httplib::Request& req) {
                 const auto b = api::parse_body(req.body, {"reading_id", "marking", "kind"});
                 const auto id = api::opt_id(b, "reading_id");
                 if (!id)
                   throw Error("request.missing_field", "field 'reading_id' is required",
                               "e.g. {\"reading_id\": 12, \"marking\": \"4n7 J\"}");
                 const auto reading = need_record(ctx.store, *id);
                 auto v = tolerance_verdict(reading.body, marking_for(ctx.store, b, reading),
                                            parse_kind(api::opt_text(b, "kind").value_or("")));
                 keep_verdict(ctx.store, reading, v);
                 return ApiReply{200, v};
               }});
  r.push_back(
      {"POST", "/api/v1/checks/loss", Access::change,
       "an electrolytic's D at 100/120 Hz against the usual limit for its voltage",
       [](ApiContext& ctx, const httplib::Request& req) {
         const auto b = api::parse_body(req.body, {"reading_id", "marking", "rated_voltage_v"});
         const auto id = api::opt_id(b, "reading_id");
         if (!id)
           throw Error("request.missing_field", "field 'reading_id' is required",
                       "e.g. {\"reading_id\": 12, \"marking\": \"2200µF 25V\"}");
         const auto reading = need_record(ctx.store, *id);
         std::string marking = api::opt_text(b, "marking").value_or("");
         if (marking.empty() && !b.contains("rated_voltage_v"))
           marking = marking_for(ctx.store, b, reading);
         auto v = loss_verdict(reading.body, marking, api::opt_number(b, "rated_voltage_v"));
         keep_verdict(ctx.store, reading, v);
         return ApiReply{200, v};
       }});
  r.push_back(
      {"POST", "/api/v1/checks/match", Access::read,
       "the spread of two or more readings, with a verdict against max_spread_pct",
       [](ApiContext& ctx, const httplib::Request& req) {
         const auto b = api::parse_body(req.body, {"reading_ids", "max_spread_pct"});
         const auto ids = ids_of(b, "reading_ids", 100);
         std::vector<nlohmann::json> readings;
         for (auto id : ids)
           readings.push_back(need_reading(ctx.store, id));
         return ApiReply{200, match_json(readings, ids, api::opt_number(b, "max_spread_pct"))};
       }});
  r.push_back({"POST", "/api/v1/checks/pairs", Access::read,
               "a bag of readings sorted into best-matched pairs",
               [](ApiContext& ctx, const httplib::Request& req) {
                 const auto b = api::parse_body(req.body, {"reading_ids"});
                 const auto ids = ids_of(b, "reading_ids", 400);
                 std::vector<nlohmann::json> readings;
                 for (auto id : ids)
                   readings.push_back(need_reading(ctx.store, id));
                 return ApiReply{200, pairs_json(readings, ids)};
               }});
  r.push_back({"POST", "/api/v1/checks/curves", Access::read,
               "two sweeps compared (left and right cabinet, original and replacement)",
               [](ApiContext& ctx, const httplib::Request& req) {
                 const auto b = api::parse_body(req.body, {"sweep_ids"});
                 const auto ids = ids_of(b, "sweep_ids", 2);
                 if (ids.size() != 2)
                   throw Error("request.bad_value", "sweep_ids must hold exactly two ids",
                               "e.g. {\"sweep_ids\": [4, 5]}");
                 auto j =
                     compare_json(sweep_bodies(ctx.store, ids[0]), sweep_bodies(ctx.store, ids[1]));
                 j["sweep_ids"] = ids;
                 return ApiReply{200, j};
               }});
  r.push_back(
      {"GET", "/api/v1/sweeps/{id}/fit", Access::read,
       "equivalent-circuit fit of a sweep (?family=capacitor|inductor|resistor|driver, ?model=)",
       [](ApiContext& ctx, const httplib::Request& req) {
         const auto id = path_id(req);
         FitRequest fr;
         fr.family = parse_family(req.get_param_value("family"));
         if (const auto m = req.get_param_value("model"); !m.empty()) {
           fr.model = dsp::parse_fit_model(m);
           if (!fr.model)
             throw Error("request.bad_value", "no fit model '" + m + "'",
                         "leave out ?model= to choose by fit quality; docs/fits.md lists them");
         }
         if (const auto m = req.get_param_value("mounting"); !m.empty()) {
           if (m.size() > 100)
             throw Error("request.out_of_range", "mounting is longer than 100 characters",
                         "shorten it");
           fr.conditions.mounting = m;
         }
         auto j = fit_json(fit_input_from_points(sweep_bodies(ctx.store, id)), fr);
         j["sweep_id"] = id;
         return ApiReply{200, j};
       }});
  r.push_back(
      {"POST", "/api/v1/sweeps/{id}/vas", Access::read,
       "a driver's Vas from this free-air sweep and a second one (added mass or closed box)",
       [](ApiContext& ctx, const httplib::Request& req) {
         const auto id = path_id(req);
         const auto b = api::parse_body(
             req.body, {"method", "second_sweep_id", "added_mass_g", "sd_cm2", "box_litres"});
         const std::string method = api::need_text(b, "method");
         const auto second = api::opt_id(b, "second_sweep_id");
         if (!second)
           throw Error("request.missing_field", "field 'second_sweep_id' is required",
                       "the sweep with the added mass, or of the driver in the box");
         const auto free_air = free_air_params(ctx.store, id);
         const auto loaded = free_air_params(ctx.store, *second);
         dsp::VasResult v;
         if (method == "added_mass") {
           const double m = api::need_number(b, "added_mass_g") / 1000;
           const double sd = api::need_number(b, "sd_cm2") / 1e4;
           v = dsp::vas_added_mass(free_air, loaded.fs_hz, m, sd);
         } else if (method == "closed_box") {
           v = dsp::vas_closed_box(free_air, loaded.fs_hz, loaded.qes,
                                   api::need_number(b, "box_litres") / 1000);
         } else {
           throw Error("request.bad_value", "method must be added_mass or closed_box",
                       "added_mass needs added_mass_g and sd_cm2; closed_box needs box_litres");
         }
         return ApiReply{
             200,
             {{"method", v.method},
              {"vas_litres", v.vas_m3 * 1000},
              {"cms_m_per_n", v.cms_m_per_n},
              {"mms_g", v.mms_kg > 0 ? nlohmann::json(v.mms_kg * 1000) : nlohmann::json()},
              {"bl_tm", v.bl_tm > 0 ? nlohmann::json(v.bl_tm) : nlohmann::json()},
              {"fs_hz", free_air.fs_hz},
              {"second_fs_hz", loaded.fs_hz},
              {"air", {{"rho_kg_m3", v.rho_kg_m3}, {"c_m_s", v.c_m_s}}}}};
       }});
}

}  // namespace tb
