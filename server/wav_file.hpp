// Reading and writing recordings through libsndfile (WAV, and whatever else libsndfile
// reads: FLAC, AIFF...). Integer formats are scaled to full scale = 1.0; float files are
// taken as they are.
#pragma once

#include <string>
#include <vector>

namespace tb {

struct Recording {
  double sample_rate_hz = 0;
  int channels = 0;
  std::string format;                     ///< e.g. "WAV PCM 24-bit"
  std::vector<std::vector<double>> data;  ///< one vector per channel
};

/// Reads every channel. Throws tb::Error: file.unreadable (with the library's reason),
/// file.empty.
Recording read_recording(const std::string& path);

enum class SampleEncoding { pcm16, pcm24, pcm32, float32 };

/// Writes a WAV file; all channels the same length. Throws tb::Error file.unwritable.
void write_wav(const std::string& path, double sample_rate_hz,
               const std::vector<std::vector<double>>& channels, SampleEncoding encoding);

}  // namespace tb
