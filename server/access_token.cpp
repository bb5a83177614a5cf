#include "server/access_token.hpp"

#include <openssl/crypto.h>
#include <openssl/evp.h>
#include <openssl/rand.h>
#include <qrencode.h>

#include <algorithm>
#include <array>
#include <cerrno>
#include <cstring>
#include <memory>

#include "server/error.hpp"

namespace tb {

namespace {

constexpr int token_bytes = 32;  // 256 bits: beyond guessing, however many tries a LAN allows
constexpr int quiet_zone = 2;

}  // namespace

std::string generate_token() {
  std::array<unsigned char, token_bytes> raw{};
  if (RAND_bytes(raw.data(), token_bytes) != 1)
    throw Error("token.random_failed", "the system's random source failed to make a token",
                "check that /dev/urandom is readable, then start tonebridged again");
  // Standard base64 (with one '=' of padding for 32 bytes), then the URL-safe alphabet of
  // RFC 4648 section 5 so the token needs no escaping in a URL.
  std::array<unsigned char, 4 * ((token_bytes + 2) / 3) + 1> encoded{};
  const int n = EVP_EncodeBlock(encoded.data(), raw.data(), token_bytes);
  OPENSSL_cleanse(raw.data(), raw.size());
  std::string token(reinterpret_cast<const char*>(encoded.data()), static_cast<std::size_t>(n));
  OPENSSL_cleanse(encoded.data(), encoded.size());
  token.erase(std::remove(token.begin(), token.end(), '='), token.end());
  std::replace(token.begin(), token.end(), '+', '-');
  std::replace(token.begin(), token.end(), '/', '_');
  return token;
}

std::string sha256_hex(std::string_view data) {
  std::array<unsigned char, EVP_MAX_MD_SIZE> digest{};
  unsigned int size = 0;
  if (EVP_Digest(data.data(), data.size(), digest.data(), &size, EVP_sha256(), nullptr) != 1)
    throw Error("internal", "OpenSSL could not compute a SHA-256 hash",
                "this is a bug or a broken OpenSSL installation; please report it");
  static constexpr char hex[] = "0123456789abcdef";
  std::string out;
  for (unsigned int i = 0; i < size; ++i) {
    out += hex[digest[i] >> 4];
    out += hex[digest[i] & 0xf];
  }
  return out;
}

bool token_matches(std::string_view token, std::string_view hash_hex) {
  const std::string actual = sha256_hex(token);
  // The length of a stored hash is no secret; only its digits are compared in constant time.
  if (hash_hex.size() != actual.size()) return false;
  return CRYPTO_memcmp(actual.data(), hash_hex.data(), actual.size()) == 0;
}

std::vector<std::vector<bool>> qr_modules(std::string_view text) {
  auto failed = [&](const std::string& why) {
    return Error("token.qr_failed", "cannot draw the address as a QR code: " + why,
                 "type the address printed beside it into the tablet's browser");
  };
  if (text.empty() || text.find('\0') != std::string_view::npos)
    throw failed("it is empty or holds a NUL byte");
  const std::string nul_terminated(text);
  errno = 0;
  const std::unique_ptr<QRcode, decltype(&QRcode_free)> code(
      QRcode_encodeString(nul_terminated.c_str(), 0, QR_ECLEVEL_M, QR_MODE_8, 1), &QRcode_free);
  if (!code) throw failed(errno == ERANGE ? "it is too long" : std::strerror(errno));
  const auto width = static_cast<std::size_t>(code->width);
  std::vector<std::vector<bool>> modules(width, std::vector<bool>(width));
  for (std::size_t y = 0; y < width; ++y)
    for (std::size_t x = 0; x < width; ++x)
      modules[y][x] = (code->data[y * width + x] & 1) != 0;  // bit 0: dark (qrencode.h)
  return modules;
}

std::string qr_for_terminal(std::string_view text) {
  const auto modules = qr_modules(text);
  const auto size = static_cast<long>(modules.size());
  auto dark = [&](long y, long x) {
    return y >= 0 && y < size && x >= 0 && x < size &&
           modules[static_cast<std::size_t>(y)][static_cast<std::size_t>(x)];
  };
  // Explicit colours rather than the terminal's own: drawing light modules as glyphs would
  // scan on a dark theme but come out inverted (unreadable to many phones) on a light one.
  // Black and white are taken from the 256-colour cube (16 and 231), which themes leave
  // alone, unlike the 8 basic colours they often restyle.
  static constexpr std::string_view black_on_white = "\x1b[38;5;16;48;5;231m";
  static constexpr std::string_view reset = "\x1b[0m";
  std::string out;
  for (long y = -quiet_zone; y < size + quiet_zone; y += 2) {
    out += black_on_white;
    for (long x = -quiet_zone; x < size + quiet_zone; ++x) {
      const bool top = dark(y, x), bottom = dark(y + 1, x);
      out += top ? (bottom ? "█" : "▀") : (bottom ? "▄" : " ");
    }
    out += reset;
    out += '\n';
  }
  return out;
}

}  // namespace tb
