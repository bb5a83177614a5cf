// Access tokens for serving the LAN: a tablet on the bench proves it was given the URL the
// service printed. Tokens are random (256 bits from OpenSSL's RAND_bytes), shown once,
// and stored only as SHA-256 hashes; comparison is constant-time.
#pragma once

#include <string>
#include <string_view>
#include <vector>

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

/// The text's QR code (libqrencode, error correction M, 8-bit mode) as rows of modules,
/// true for a dark module, square, without the quiet zone. Throws tb::Error
/// token.qr_failed if the text is empty, holds a NUL byte or does not fit in a QR code.
std::vector<std::vector<bool>> qr_modules(std::string_view text);

/// qr_modules(text) drawn for a terminal with Unicode half blocks (▀ ▄ █ and space), two
/// rows of modules per line, with a quiet zone of 2 modules, every line the code's width
/// + 4 columns wide. Each line sets its own colours with ANSI escapes, black glyphs
/// (dark modules) on a white background, and resets them at its end, so the code scans
/// on dark and light terminals alike; print it to a terminal, not to a log.
/// Throws as qr_modules.
std::string qr_for_terminal(std::string_view text);

}  // namespace tb
