#include "server/wav_file.hpp"

#include <sndfile.h>

#include <cmath>
#include <memory>

#include "server/error.hpp"

namespace tb {

namespace {

struct Closer {
  void operator()(SNDFILE* f) const { sf_close(f); }
};
using SndFile = std::unique_ptr<SNDFILE, Closer>;

std::string describe(int format) {
  const int type = format & SF_FORMAT_TYPEMASK;
  std::string out = type == SF_FORMAT_WAV || type == SF_FORMAT_WAVEX ? "WAV"
                    : type == SF_FORMAT_FLAC                         ? "FLAC"
                    : type == SF_FORMAT_AIFF                         ? "AIFF"
                                                                     : "audio";
  switch (format & SF_FORMAT_SUBMASK) {
    case SF_FORMAT_PCM_16:
      return out + " PCM 16-bit";
    case SF_FORMAT_PCM_24:
      return out + " PCM 24-bit";
    case SF_FORMAT_PCM_32:
      return out + " PCM 32-bit";
    case SF_FORMAT_FLOAT:
      return out + " float 32-bit";
    case SF_FORMAT_DOUBLE:
      return out + " float 64-bit";
    default:
      return out;
  }
}

}  // namespace

Recording read_recording(const std::string& path) {
  SF_INFO info{};
  SndFile file(sf_open(path.c_str(), SFM_READ, &info));
  if (!file) {
    throw Error("file.unreadable", path + ": " + sf_strerror(nullptr),
                "give the path of a WAV (or FLAC/AIFF) recording of the jig");
  }
  if (info.frames <= 0 || info.channels <= 0 || info.samplerate <= 0) {
    throw Error("file.empty", path + ": the recording holds no samples",
                "record the jig again; the file is empty");
  }
  Recording rec;
  rec.sample_rate_hz = info.samplerate;
  rec.channels = info.channels;
  rec.format = describe(info.format);
  const auto frames = static_cast<std::size_t>(info.frames);
  const auto channels = static_cast<std::size_t>(info.channels);
  std::vector<double> interleaved(frames * channels);
  const sf_count_t got = sf_readf_double(file.get(), interleaved.data(), info.frames);
  if (got <= 0) {
    throw Error("file.unreadable", path + ": " + sf_strerror(file.get()),
                "the file is damaged or truncated: record it again");
  }
  const auto n = static_cast<std::size_t>(got);
  rec.data.assign(channels, std::vector<double>(n));
  for (std::size_t i = 0; i < n; ++i) {
    for (std::size_t c = 0; c < channels; ++c) {
      const double v = interleaved[i * channels + c];
      rec.data[c][i] = std::isfinite(v) ? v : 0.0;
    }
  }
  return rec;
}

void write_wav(const std::string& path, double sample_rate_hz,
               const std::vector<std::vector<double>>& channels, SampleEncoding encoding) {
  SF_INFO info{};
  info.samplerate = static_cast<int>(std::lround(sample_rate_hz));
  info.channels = static_cast<int>(channels.size());
  int sub = SF_FORMAT_FLOAT;
  if (encoding == SampleEncoding::pcm16) sub = SF_FORMAT_PCM_16;
  if (encoding == SampleEncoding::pcm24) sub = SF_FORMAT_PCM_24;
  if (encoding == SampleEncoding::pcm32) sub = SF_FORMAT_PCM_32;
  info.format = SF_FORMAT_WAV | sub;
  SndFile file(sf_open(path.c_str(), SFM_WRITE, &info));
  if (!file) {
    throw Error("file.unwritable", path + ": " + sf_strerror(nullptr),
                "check that the folder exists and is writable");
  }
  // Integer files are written without libsndfile's clipping surprises: values are
  // rounded to the nearest code like a card would.
  sf_command(file.get(), SFC_SET_CLIPPING, nullptr, SF_TRUE);
  const std::size_t n = channels.empty() ? 0 : channels[0].size();
  std::vector<double> interleaved(n * channels.size());
  for (std::size_t i = 0; i < n; ++i)
    for (std::size_t c = 0; c < channels.size(); ++c)
      interleaved[i * channels.size() + c] = channels[c][i];
  if (sf_writef_double(file.get(), interleaved.data(), static_cast<sf_count_t>(n)) !=
      static_cast<sf_count_t>(n)) {
    throw Error("file.unwritable", path + ": " + sf_strerror(file.get()),
                "check the free disk space");
  }
}

}  // namespace tb
