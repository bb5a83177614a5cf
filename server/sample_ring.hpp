// A single-producer, single-consumer ring of samples: the audio device's callback pushes,
// the engine thread pops. Lock-free and allocation-free after construction, so the
// callback never blocks, allocates or waits on the engine.
//
// Example:
//   SampleRing ring(1 << 16);
//   ring.push(frames);              // device thread; returns how many fitted
//   std::size_t n = ring.pop(out);  // engine thread; returns how many were read
#pragma once

#include <atomic>
#include <bit>
#include <cstddef>
#include <span>
#include <vector>

namespace tb {

class SampleRing {
 public:
  /// Capacity is rounded up to a power of two (>= 2).
  explicit SampleRing(std::size_t capacity)
      : buf_(std::bit_ceil(capacity < 2 ? std::size_t{2} : capacity)), mask_(buf_.size() - 1) {}

  std::size_t capacity() const { return buf_.size(); }

  /// Producer only. Copies as many samples as fit; the rest are dropped and counted.
  std::size_t push(std::span<const float> samples) {
    const std::size_t head = head_.load(std::memory_order_relaxed);
    const std::size_t tail = tail_.load(std::memory_order_acquire);
    const std::size_t room = buf_.size() - (head - tail);
    const std::size_t n = samples.size() < room ? samples.size() : room;
    for (std::size_t i = 0; i < n; ++i)
      buf_[(head + i) & mask_] = samples[i];
    head_.store(head + n, std::memory_order_release);
    if (n < samples.size()) dropped_.fetch_add(samples.size() - n, std::memory_order_relaxed);
    return n;
  }

  /// Consumer only. Copies up to out.size() samples, oldest first.
  std::size_t pop(std::span<float> out) {
    const std::size_t tail = tail_.load(std::memory_order_relaxed);
    const std::size_t head = head_.load(std::memory_order_acquire);
    const std::size_t avail = head - tail;
    const std::size_t n = out.size() < avail ? out.size() : avail;
    for (std::size_t i = 0; i < n; ++i)
      out[i] = buf_[(tail + i) & mask_];
    tail_.store(tail + n, std::memory_order_release);
    return n;
  }

  /// Samples the producer could not fit since construction (the consumer fell behind).
  std::size_t dropped() const { return dropped_.load(std::memory_order_relaxed); }

 private:
  std::vector<float> buf_;
  std::size_t mask_;
  alignas(64) std::atomic<std::size_t> head_{0};  // written by the producer
  alignas(64) std::atomic<std::size_t> tail_{0};  // written by the consumer
  std::atomic<std::size_t> dropped_{0};
};

}  // namespace tb
