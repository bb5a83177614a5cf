// Access tokens for serving the LAN: a tablet on the bench proves it was given the URL the
// service printed. Tokens are random (256 bits from OpenSSL's RAND_bytes), shown once,
// and stored only as SHA-256 hashes; comparison is constant-time.
#pragma once

#include <string>
#include <string_view>

namespace tb {

/// A new token: 43 characters of URL-safe base64 (no padding). Throws tb::Error
/// token.random_failed if the system's random source fails.
std::string generate_token();

/// SHA-256 of the token's bytes as 64 lower-case hex digits.
/// Example: sha256_hex("abc") ==
///   "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad" (FIPS 180-2 B.1).
std::string sha256_hex(std::string_view data);

/// True when sha256_hex(token) equals hash_hex, compared in constant time.
bool token_matches(std::string_view token, std::string_view hash_hex);

/// The text as a QR code (libqrencode, error correction M) drawn with Unicode half blocks
/// for a terminal, two rows of modules per line, with a quiet zone of 2 modules; dark
/// modules are drawn as spaces on a light block background so it scans on dark terminals.
/// Throws tb::Error token.qr_failed if the text does not fit.
std::string qr_for_terminal(std::string_view text);

}  // namespace tb
