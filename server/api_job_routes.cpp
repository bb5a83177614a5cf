// Routes for repair jobs and the parts in them.
#include <httplib.h>

#include <algorithm>

#include "server/api_request.hpp"
#include "server/api_routes.hpp"
#include "server/error.hpp"
#include "server/event_bus.hpp"
#include "server/job_report.hpp"
#include "server/store.hpp"

namespace tb {

namespace {

std::string field(const nlohmann::json& b, const char* name, std::size_t max_len,
                  const std::string& fallback) {
  auto v = api::opt_text(b, name).value_or(fallback);
  if (v.size() > max_len) {
    throw Error("request.out_of_range",
                std::string(name) + " is longer than " + std::to_string(max_len) + " characters",
                "shorten it");
  }
  return v;
}

JobRecord job_from(const nlohmann::json& b, JobRecord j) {
  j.make = field(b, "make", 200, j.make);
  j.model = field(b, "model", 200, j.model);
  j.serial = field(b, "serial", 100, j.serial);
  j.notes = field(b, "notes", 4000, j.notes);
  return j;
}

// Designators as printed on boards: letters, digits, '-', '_', '.', up to 16 characters.
std::string designator(const nlohmann::json& b, const std::string& fallback) {
  auto d = field(b, "designator", 16, fallback);
  const bool ok = !d.empty() && std::all_of(d.begin(), d.end(), [](unsigned char c) {
    return std::isalnum(c) || c == '-' || c == '_' || c == '.';
  });
  if (!ok) {
    throw Error("request.bad_value", "designator '" + d + "' is not a board designator",
                "use letters, digits, '-', '_' or '.', e.g. C12 or L3");
  }
  return d;
}

PartRecord part_from(const nlohmann::json& b, PartRecord p) {
  p.designator = designator(b, p.designator);
  p.marking = field(b, "marking", 100, p.marking);
  p.notes = field(b, "notes", 4000, p.notes);
  return p;
}

nlohmann::json to_json(const JobRecord& j) {
  return {{"id", j.id},       {"created_at", j.created_at}, {"make", j.make},
          {"model", j.model}, {"serial", j.serial},         {"notes", j.notes}};
}

nlohmann::json to_json(const PartRecord& p) {
  return {{"id", p.id},           {"job_id", p.job_id}, {"designator", p.designator},
          {"marking", p.marking}, {"notes", p.notes},   {"created_at", p.created_at}};
}

JobRecord need_job(const Store& s, std::int64_t id) {
  auto j = s.job(id);
  if (!j) not_found("job", id);
  return *j;
}

PartRecord need_part(const Store& s, std::int64_t id) {
  auto p = s.part(id);
  if (!p) not_found("part", id);
  return *p;
}

PartHistory history(const Store& s, const PartRecord& p) {
  return {p, s.part_readings(p.id), s.part_sweeps(p.id), s.verdicts(p.id)};
}

// ?format= of a report: "html" (the default) or "csv".
std::string report_format(const httplib::Request& req) {
  const auto f = req.has_param("format") ? req.get_param_value("format") : "html";
  if (f != "html" && f != "csv") {
    throw Error("request.bad_value", "format must be html or csv, got '" + f + "'",
                "add ?format=html for the printable page or ?format=csv for a spreadsheet");
  }
  return f;
}

const std::vector<std::string_view> kJobFields{"make", "model", "serial", "notes"};
const std::vector<std::string_view> kPartFields{"designator", "marking", "notes"};

}  // namespace

void add_job_routes(std::vector<Route>& r) {
  r.push_back({"GET", "/api/v1/jobs", Access::read, "repair jobs, newest first",
               [](ApiContext& ctx, const httplib::Request&) {
                 nlohmann::json out = nlohmann::json::array();
                 for (const auto& j : ctx.store.jobs())
                   out.push_back(to_json(j));
                 return ApiReply{200, {{"jobs", out}}};
               }});
  r.push_back({"POST", "/api/v1/jobs", Access::change, "open a repair job",
               [](ApiContext& ctx, const httplib::Request& req) {
                 auto j = job_from(api::parse_body(req.body, kJobFields), {});
                 if (j.make.empty() && j.model.empty()) {
                   throw Error("request.missing_field", "a job needs a make or a model",
                               "e.g. {\"make\":\"Quillon Audio\",\"model\":\"QI-260\"}");
                 }
                 j.id = ctx.store.add_job(j);
                 const auto saved = need_job(ctx.store, j.id);
                 ctx.events.publish("job", to_json(saved));
                 return ApiReply{201, to_json(saved)};
               }});
  r.push_back({"GET", "/api/v1/jobs/{id}", Access::read, "one job with its parts",
               [](ApiContext& ctx, const httplib::Request& req) {
                 const auto id = path_id(req);
                 auto j = to_json(need_job(ctx.store, id));
                 j["parts"] = nlohmann::json::array();
                 for (const auto& p : ctx.store.parts(id))
                   j["parts"].push_back(to_json(p));
                 return ApiReply{200, j};
               }});
  r.push_back({"PUT", "/api/v1/jobs/{id}", Access::change, "change a job's fields",
               [](ApiContext& ctx, const httplib::Request& req) {
                 const auto id = path_id(req);
                 const auto j =
                     job_from(api::parse_body(req.body, kJobFields), need_job(ctx.store, id));
                 ctx.store.update_job(j);
                 const auto saved = need_job(ctx.store, id);
                 ctx.events.publish("job", to_json(saved));
                 return ApiReply{200, to_json(saved)};
               }});
  r.push_back({"DELETE", "/api/v1/jobs/{id}", Access::change,
               "delete a job and its parts (their readings and sweeps stay)",
               [](ApiContext& ctx, const httplib::Request& req) {
                 const auto id = path_id(req);
                 if (!ctx.store.delete_job(id)) not_found("job", id);
                 return ApiReply{204, nullptr};
               }});
  r.push_back({"POST", "/api/v1/jobs/{id}/parts", Access::change, "add a part to a job",
               [](ApiContext& ctx, const httplib::Request& req) {
                 const auto job_id = path_id(req);
                 need_job(ctx.store, job_id);
                 const auto b = api::parse_body(req.body, kPartFields);
                 if (!api::opt_text(b, "designator")) {
                   throw Error("request.missing_field", "field 'designator' is required",
                               "e.g. {\"designator\":\"C12\",\"marking\":\"100n K 400V\"}");
                 }
                 PartRecord p;
                 p.job_id = job_id;
                 p = part_from(b, p);
                 p.id = ctx.store.add_part(p);
                 return ApiReply{201, to_json(need_part(ctx.store, p.id))};
               }});
  r.push_back({"GET", "/api/v1/jobs/{id}/report", Access::read,
               "the job as a printable page or CSV (?format=html|csv)",
               [](ApiContext& ctx, const httplib::Request& req) {
                 const auto id = path_id(req);
                 const auto format = report_format(req);
                 JobReport report;
                 report.job = need_job(ctx.store, id);
                 for (const auto& p : ctx.store.parts(id))
                   report.parts.push_back(history(ctx.store, p));
                 report.date = utc_now_iso().substr(0, 10);
                 report.workshop = req.get_param_value("workshop");
                 if (report.workshop.size() > 200) {
                   throw Error("request.out_of_range", "workshop is longer than 200 characters",
                               "shorten it");
                 }
                 const std::string name = "job-" + std::to_string(id);
                 if (format == "csv") {
                   return ApiReply::file(job_report_csv(report), "text/csv; charset=utf-8",
                                         name + ".csv");
                 }
                 // No file name: the browser shows the page, ready to print.
                 return ApiReply::file(job_report_html(report), "text/html; charset=utf-8", "");
               }});
  r.push_back({"GET", "/api/v1/parts/{id}", Access::read,
               "one part with its readings and sweeps by role and its verdicts",
               [](ApiContext& ctx, const httplib::Request& req) {
                 const auto p = need_part(ctx.store, path_id(req));
                 auto j = to_json(p);
                 j.update(part_history_json(history(ctx.store, p)));
                 return ApiReply{200, j};
               }});
  r.push_back({"GET", "/api/v1/parts/{id}/verdicts", Access::read,
               "a part's verdicts, newest first", [](ApiContext& ctx, const httplib::Request& req) {
                 const auto id = path_id(req);
                 need_part(ctx.store, id);
                 nlohmann::json out = nlohmann::json::array();
                 for (const auto& v : ctx.store.verdicts(id))
                   out.push_back(verdict_json(v));
                 return ApiReply{200, {{"verdicts", out}}};
               }});
  r.push_back({"PUT", "/api/v1/parts/{id}", Access::change, "change a part's fields",
               [](ApiContext& ctx, const httplib::Request& req) {
                 const auto id = path_id(req);
                 const auto p =
                     part_from(api::parse_body(req.body, kPartFields), need_part(ctx.store, id));
                 ctx.store.update_part(p);
                 return ApiReply{200, to_json(need_part(ctx.store, id))};
               }});
  r.push_back({"DELETE", "/api/v1/parts/{id}", Access::change,
               "delete a part and its verdicts (its readings and sweeps stay)",
               [](ApiContext& ctx, const httplib::Request& req) {
                 const auto id = path_id(req);
                 if (!ctx.store.delete_part(id)) not_found("part", id);
                 return ApiReply{204, nullptr};
               }});
}

}  // namespace tb
