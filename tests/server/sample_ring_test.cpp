#include "server/sample_ring.hpp"

#include <catch2/catch.hpp>

#include <thread>
#include <vector>

namespace tb {

TEST_CASE("the sample ring keeps order across its wrap and counts what did not fit",
          "[sample_ring]") {
  SampleRing ring(5);  // rounded up to 8
  CHECK(ring.capacity() == 8);
  const std::vector<float> a{1, 2, 3, 4, 5, 6};
  CHECK(ring.push(a) == 6);
  std::vector<float> out(4);
  CHECK(ring.pop(out) == 4);
  CHECK(out == std::vector<float>{1, 2, 3, 4});
  const std::vector<float> b{7, 8, 9, 10, 11, 12, 13};
  CHECK(ring.push(b) == 6);  // 2 still inside: room for 6
  CHECK(ring.dropped() == 1);
  std::vector<float> rest(10);
  CHECK(ring.pop(rest) == 8);
  CHECK(std::vector<float>(rest.begin(), rest.begin() + 8) ==
        std::vector<float>{5, 6, 7, 8, 9, 10, 11, 12});
  CHECK(ring.pop(rest) == 0);
}

TEST_CASE("one producer and one consumer thread pass a million samples intact", "[sample_ring]") {
  SampleRing ring(1024);
  constexpr int kTotal = 1'000'000;
  std::thread producer([&] {
    float block[64];
    int next = 0;
    while (next < kTotal) {
      int n = 0;
      for (; n < 64 && next + n < kTotal; ++n)
        block[n] = static_cast<float>((next + n) % 4096);
      std::size_t pushed = 0;
      while (pushed < static_cast<std::size_t>(n))
        pushed += ring.push(std::span<const float>(block + pushed, n - pushed));
      next += n;
    }
  });
  std::vector<float> chunk(100);
  int seen = 0;
  bool in_order = true;
  while (seen < kTotal) {
    const std::size_t n = ring.pop(chunk);
    for (std::size_t i = 0; i < n; ++i, ++seen)
      in_order = in_order && chunk[i] == static_cast<float>(seen % 4096);
  }
  producer.join();
  CHECK(in_order);  // every sample arrived, in order (the producer retried what did not fit)
}

}  // namespace tb
