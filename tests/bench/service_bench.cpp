// tonebridge-service-bench: the service under many clients on loopback. Prints figures
// only (no pass/fail; always exits 0 unless the service cannot start).
//
// A real tonebridged on the simulated bench (real-time pacing, continuous readings at
// 4 per second so events flow) is measured twice in this one process:
//   baseline: a burst of status and latest-reading requests with no event streams open;
//   loaded:   the same burst with N event-stream clients connected (default 50).
// Printed: errors (failed or non-200 requests, dropped streams), p50/p99/max latency of
// each request kind, the loaded/baseline p99 ratio, events received per stream, and the
// service's resident memory (VmRSS) idle, and at its peak (VmHWM) after the load.
//
// Usage: tonebridge-service-bench [--clients N] [--requests N]
#include <algorithm>
#include <atomic>
#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <fstream>
#include <mutex>
#include <string>
#include <thread>
#include <vector>

#include <httplib.h>

#include "tests/support/service_process.hpp"

namespace {

using clock_type = std::chrono::steady_clock;

long status_kb(pid_t pid, const char* key) {
  std::ifstream in("/proc/" + std::to_string(pid) + "/status");
  std::string line;
  while (std::getline(in, line))
    if (line.rfind(key, 0) == 0) return std::atol(line.c_str() + std::strlen(key));
  return -1;
}

struct Burst {
  std::vector<double> status_ms, latest_ms;
  int errors = 0;
};

double pct(std::vector<double> v, double p) {
  if (v.empty()) return 0;
  std::sort(v.begin(), v.end());
  return v[std::min(v.size() - 1, static_cast<std::size_t>(p * static_cast<double>(v.size())))];
}

// `requests` requests from 4 client threads, alternating status and latest reading.
Burst burst(int port, int requests) {
  Burst b;
  std::mutex m;
  std::vector<std::thread> threads;
  for (int t = 0; t < 4; ++t) {
    threads.emplace_back([&, t] {
      httplib::Client c("127.0.0.1", port);
      c.set_keep_alive(true);
      for (int i = t; i < requests; i += 4) {
        const bool status = i % 2 == 0;
        const auto start = clock_type::now();
        auto r = c.Get(status ? "/api/v1/status" : "/api/v1/readings/latest");
        const double ms =
            std::chrono::duration<double, std::milli>(clock_type::now() - start).count();
        std::lock_guard lock(m);
        if (!r || r->status != 200) ++b.errors;
        (status ? b.status_ms : b.latest_ms).push_back(ms);
      }
    });
  }
  for (auto& t : threads)
    t.join();
  return b;
}

void print(const char* name, const Burst& b) {
  std::printf(
      "  %-9s status p50 %6.2f ms  p99 %6.2f ms  max %6.2f | latest p50 %6.2f ms  p99 "
      "%6.2f ms  max %6.2f | errors %d\n",
      name, pct(b.status_ms, 0.5), pct(b.status_ms, 0.99), pct(b.status_ms, 1.0),
      pct(b.latest_ms, 0.5), pct(b.latest_ms, 0.99), pct(b.latest_ms, 1.0), b.errors);
}

}  // namespace

int main(int argc, char** argv) {
  int clients = 50, requests = 2000;
  for (int i = 1; i + 1 < argc; i += 2) {
    if (!std::strcmp(argv[i], "--clients")) clients = std::atoi(argv[i + 1]);
    if (!std::strcmp(argv[i], "--requests")) requests = std::atoi(argv[i + 1]);
  }
  tb::test::ServiceProcess svc({"--sim-real-time=true", "--duration-s", "0.2",
                                "--max-event-clients", std::to_string(clients + 4)});
  std::this_thread::sleep_for(std::chrono::seconds(1));
  const long idle_kb = status_kb(svc.pid(), "VmRSS:");
  std::printf("tonebridged on 127.0.0.1:%d, simulated bench in real time\n", svc.port());
  std::printf("idle RSS: %.1f MB\n", static_cast<double>(idle_kb) / 1024);

  svc.post("/api/v1/watch", {{"per_s", 4}});
  std::this_thread::sleep_for(std::chrono::seconds(2));
  const Burst base = burst(svc.port(), requests);

  std::atomic<bool> stop{false};
  std::atomic<int> stream_errors{0}, connected{0};
  std::vector<std::atomic<long>> events(static_cast<std::size_t>(clients));
  std::vector<std::thread> streams;
  for (int i = 0; i < clients; ++i) {
    streams.emplace_back([&, i] {
      httplib::Client c("127.0.0.1", svc.port());
      c.set_read_timeout(30, 0);
      bool counted = false;
      auto r = c.Get("/api/v1/events", [&](const char* data, std::size_t len) {
        if (!counted) {
          counted = true;
          ++connected;
        }
        for (std::size_t k = 0; k + 6 < len; ++k)
          if (!std::memcmp(data + k, "event:", 6)) ++events[static_cast<std::size_t>(i)];
        return !stop.load();
      });
      if (!r && r.error() != httplib::Error::Canceled) ++stream_errors;
    });
  }
  while (connected.load() < clients)
    std::this_thread::sleep_for(std::chrono::milliseconds(20));
  std::this_thread::sleep_for(std::chrono::seconds(1));
  const Burst loaded = burst(svc.port(), requests);
  std::this_thread::sleep_for(std::chrono::seconds(2));
  const long load_kb = status_kb(svc.pid(), "VmRSS:");
  const long peak_kb = status_kb(svc.pid(), "VmHWM:");
  stop = true;
  svc.request("DELETE", "/api/v1/watch");
  // Streams end at their next event or ping.
  for (auto& t : streams)
    t.join();

  long min_events = -1;
  for (auto& e : events)
    min_events = min_events < 0 ? e.load() : std::min(min_events, e.load());
  std::printf("\n%d requests per burst (status and latest reading alternating, 4 client threads)\n",
              requests);
  print("baseline", base);
  char label[32];
  std::snprintf(label, sizeof label, "%d streams", clients);
  print(label, loaded);
  std::printf("  p99 ratio loaded/baseline: status %.2f, latest %.2f\n",
              pct(loaded.status_ms, 0.99) / pct(base.status_ms, 0.99),
              pct(loaded.latest_ms, 0.99) / pct(base.latest_ms, 0.99));
  std::printf("event streams: %d connected, %d errors, fewest events on one stream: %ld\n",
              connected.load(), stream_errors.load(), min_events);
  std::printf("RSS: idle %.1f MB, under load %.1f MB, peak %.1f MB\n",
              static_cast<double>(idle_kb) / 1024, static_cast<double>(load_kb) / 1024,
              static_cast<double>(peak_kb) / 1024);
  std::printf("errors in all: %d\n", base.errors + loaded.errors + stream_errors.load());
  return 0;
}
