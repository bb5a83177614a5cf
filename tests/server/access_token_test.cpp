#include "server/access_token.hpp"

#include <unistd.h>

#include <catch2/catch.hpp>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <set>

#include "server/error.hpp"
#include "tests/support/run_command.hpp"
#include "tests/support/signals.hpp"

using Modules = std::vector<std::vector<bool>>;

namespace {

bool on_path(const std::string& program) {
  const char* path = std::getenv("PATH");
  std::string dirs = path ? path : "/usr/bin:/bin";
  for (std::size_t start = 0; start <= dirs.size();) {
    const std::size_t colon = std::min(dirs.find(':', start), dirs.size());
    const std::string candidate = dirs.substr(start, colon - start) + "/" + program;
    if (access(candidate.c_str(), X_OK) == 0) return true;
    start = colon + 1;
  }
  return false;
}

std::string without_escapes(const std::string& line) {
  std::string out;
  for (std::size_t i = 0; i < line.size(); ++i) {
    if (line[i] == '\x1b') {
      i = line.find('m', i);  // every escape qr_for_terminal writes is a colour, ending in 'm'
      continue;
    }
    out += line[i];
  }
  return out;
}

// The terminal drawing read back into modules: each character is two modules, one above
// the other.
Modules read_drawing(const std::string& drawing, std::vector<std::size_t>& widths) {
  const std::pair<std::string, std::pair<bool, bool>> glyphs[] = {
      {" ", {false, false}}, {"▀", {true, false}}, {"▄", {false, true}}, {"█", {true, true}}};
  Modules rows;
  std::size_t start = 0;
  for (std::size_t end; (end = drawing.find('\n', start)) != std::string::npos; start = end + 1) {
    const std::string line = without_escapes(drawing.substr(start, end - start));
    std::vector<bool> top, bottom;
    for (std::size_t i = 0; i < line.size();) {
      bool known = false;
      for (const auto& [glyph, halves] : glyphs) {
        if (line.compare(i, glyph.size(), glyph) == 0) {
          top.push_back(halves.first);
          bottom.push_back(halves.second);
          i += glyph.size();
          known = true;
          break;
        }
      }
      REQUIRE(known);
    }
    widths.push_back(top.size());
    rows.push_back(top);
    rows.push_back(bottom);
  }
  return rows;
}

// Binary PGM (netpbm), `scale` pixels per module, framed by 4 modules of dark as a dark
// terminal shows the drawing: only the drawing's own quiet zone is light.
void write_pgm(const Modules& modules, const std::string& path, int scale) {
  const int frame = 4;
  const int height = static_cast<int>(modules.size()) + 2 * frame;
  const int width = static_cast<int>(modules.front().size()) + 2 * frame;
  std::ofstream out(path, std::ios::binary);
  out << "P5\n" << width * scale << " " << height * scale << "\n255\n";
  for (int y = 0; y < height * scale; ++y) {
    for (int x = 0; x < width * scale; ++x) {
      const int my = y / scale - frame, mx = x / scale - frame;
      const bool inside = my >= 0 && mx >= 0 && my < height - 2 * frame && mx < width - 2 * frame;
      const bool dark =
          !inside || modules[static_cast<std::size_t>(my)][static_cast<std::size_t>(mx)];
      out.put(dark ? '\0' : '\xff');
    }
  }
}

}  // namespace

TEST_CASE("SHA-256 matches the published test vectors", "[access_token]") {
  // FIPS 180-2, appendix B.1: one block message "abc".
  CHECK(tb::sha256_hex("abc") ==
        "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad");
  // FIPS 180-2, appendix B.2: the 448-bit multi-block message.
  CHECK(tb::sha256_hex("abcdbcdecdefdefgefghfghighijhijkijkljklmklmnlmnomnopnopq") ==
        "248d6a61d20638b8e5c026930c3e6039a33ce45964ff2167f6ecedd419db06c1");
  // FIPS 180-2, appendix B.3: one million repetitions of "a".
  CHECK(tb::sha256_hex(std::string(1000000, 'a')) ==
        "cdc76e5c9914fb9281a1c7e284d73e67f1809a48a497200e046d39ccc7112cd0");
  // The empty message: not in FIPS 180-2; NIST CAVP SHAVS, SHA256ShortMsg.rsp, Len = 0.
  CHECK(tb::sha256_hex("") == "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855");
}

TEST_CASE("tokens are 43 URL-safe characters and never repeat", "[access_token]") {
  std::set<std::string> seen;
  for (int i = 0; i < 1000; ++i) {
    const std::string token = tb::generate_token();
    REQUIRE(token.size() == 43);
    for (const char c : token) {
      INFO(token);
      REQUIRE((std::isalnum(static_cast<unsigned char>(c)) || c == '-' || c == '_'));
    }
    seen.insert(token);
  }
  CHECK(seen.size() == 1000);
}

TEST_CASE("a token matches only its own hash", "[access_token]") {
  const std::string token = tb::generate_token();
  const std::string hash = tb::sha256_hex(token);
  CHECK(tb::token_matches(token, hash));
  CHECK_FALSE(tb::token_matches(tb::generate_token(), hash));
  CHECK_FALSE(tb::token_matches(token.substr(1), hash));
  CHECK_FALSE(tb::token_matches(token, hash.substr(0, 63)));
  CHECK_FALSE(tb::token_matches(token, hash + "0"));
  CHECK_FALSE(tb::token_matches(token, ""));
}

TEST_CASE("the QR code of a URL draws evenly and decodes to the URL", "[access_token]") {
  std::string url = "http://192.168.1.20:7583/?token=" + tb::generate_token();
  url.resize(60);
  const std::string drawing = tb::qr_for_terminal(url);
  const Modules modules = tb::qr_modules(url);
  REQUIRE(modules.size() >= 21);

  std::vector<std::size_t> widths;
  const Modules drawn = read_drawing(drawing, widths);
  const std::size_t width = modules.size() + 4;  // a quiet zone of 2 on each side
  for (const std::size_t w : widths)
    CHECK(w == width);
  REQUIRE(drawn.size() >= width);
  for (std::size_t y = 0; y < drawn.size(); ++y) {
    for (std::size_t x = 0; x < width; ++x) {
      const bool inside = y >= 2 && x >= 2 && y < modules.size() + 2 && x < modules.size() + 2;
      INFO("row " << y << " column " << x);
      REQUIRE(drawn[y][x] == (inside && modules[y - 2][x - 2]));
    }
  }

  // Decoded by ZBar (Debian zbar-tools), an independent QR reader, from what the terminal
  // shows (the drawing read back, not qr_modules) on a dark background.
  if (!on_path("zbarimg"))
    FAIL("zbarimg is missing: install Debian's zbar-tools (the project's set-up installs it)");
  const std::string dir = tb::test::make_temp_dir("qr");
  const std::string image = dir + "/code.pgm";
  write_pgm(drawn, image, 4);
  const auto result = tb::test::run_command("zbarimg", {"--raw", "-q", image});
  std::filesystem::remove_all(dir);
  INFO(result.err);
  CHECK(result.exit_code == 0);
  CHECK(result.out == url + "\n");
}

TEST_CASE("text that cannot be a QR code is refused", "[access_token]") {
  for (const std::string& text : {std::string(), std::string(8000, 'x'), std::string("a\0b", 3)}) {
    INFO(text.size());
    try {
      tb::qr_for_terminal(text);
      FAIL("drew a QR code");
    } catch (const tb::Error& e) {
      CHECK(e.id() == "token.qr_failed");
    }
  }
}
