// Runs headless Chromium on a file, collects its console lines and screenshot; decodes PNG.
#include "browser.hpp"

#include "scratch.hpp"

#include <zlib.h>

#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <random>
#include <sstream>
#include <stdexcept>
#include <sys/wait.h>
#include <unordered_set>

namespace shelfstage::test {

namespace {

std::string quote(const std::string& s) {
  std::string q = "'";
  for (char c : s) q += c == '\'' ? std::string("'\\''") : std::string(1, c);
  return q + "'";
}

std::string slurp(const std::filesystem::path& p) {
  std::ifstream in(p, std::ios::binary);
  std::ostringstream ss;
  ss << in.rdbuf();
  return ss.str();
}

std::string flags(const Scratch& s) {
  return "--headless --no-sandbox --disable-gpu --no-first-run --disable-background-networking "
         "--disable-component-update --disable-sync --disable-extensions --user-data-dir=" +
         quote((s.path / "profile").string());
}

int run_shell(const std::string& command) {
  const int status = std::system(command.c_str());
  if (status == -1) throw std::runtime_error("cannot run: " + command);
  return WIFEXITED(status) ? WEXITSTATUS(status) : 128;
}

std::uint32_t be32(const std::string& b, std::size_t at) {
  return (static_cast<std::uint32_t>(static_cast<unsigned char>(b[at])) << 24) |
         (static_cast<std::uint32_t>(static_cast<unsigned char>(b[at + 1])) << 16) |
         (static_cast<std::uint32_t>(static_cast<unsigned char>(b[at + 2])) << 8) |
         static_cast<std::uint32_t>(static_cast<unsigned char>(b[at + 3]));
}

}  // namespace

std::string chromium_program() {
  const std::string p = SHELFSTAGE_CHROMIUM;
  if (p.empty() || p.ends_with("NOTFOUND"))
    throw std::runtime_error(
        "chromium was not found when the build was configured (SHELFSTAGE_CHROMIUM is empty): install the "
        "Debian package 'chromium' and configure again");
  return p;
}

BrowserRun render(const std::string& path, int width, int height, RenderAlso also) {
  const std::string program = chromium_program();
  Scratch s("shelfstage-browser-");
  const auto png = s.path / "shot.png";
  const auto err = s.path / "stderr.txt";
  const auto dom = s.path / "dom.html";
  const auto pdf = s.path / "page.pdf";
  const std::string url = "file://" + std::filesystem::absolute(path).string();
  std::string cmd = "timeout 120 " + quote(program) + " " + flags(s) + " --enable-logging=stderr --v=0 " +
                    "--hide-scrollbars --screenshot=" + quote(png.string()) +
                    " --window-size=" + std::to_string(width) + "," + std::to_string(height);
  if (also.dom) cmd += " --dump-dom";
  if (also.pdf) cmd += " --no-pdf-header-footer --print-to-pdf=" + quote(pdf.string());
  cmd += " " + quote(url) + " >" + (also.dom ? quote(dom.string()) : std::string("/dev/null")) + " 2>" +
         quote(err.string());
  BrowserRun r;
  r.exit_status = run_shell(cmd);
  r.log = slurp(err);
  if (std::filesystem::exists(png)) r.screenshot = slurp(png);
  if (also.dom) r.dom = slurp(dom);
  if (also.pdf && std::filesystem::exists(pdf)) r.pdf = slurp(pdf);
  std::istringstream in(r.log);
  for (std::string line; std::getline(in, line);)
    if (line.find(":CONSOLE") != std::string::npos || line.find("Uncaught") != std::string::npos)
      r.console.push_back(line);
  return r;
}

std::string dump_dom(const std::string& path) {
  const std::string program = chromium_program();
  Scratch s("shelfstage-browser-");
  const auto out = s.path / "dom.html";
  const std::string url = "file://" + std::filesystem::absolute(path).string();
  const std::string cmd = "timeout 120 " + quote(program) + " " + flags(s) + " --dump-dom " + quote(url) + " >" +
                          quote(out.string()) + " 2>/dev/null";
  const int status = run_shell(cmd);
  if (status != 0) throw std::runtime_error("chromium --dump-dom exited with status " + std::to_string(status));
  return slurp(out);
}

int pdf_pages(const std::string& pdf) {
  int n = 0;
  for (std::size_t at = pdf.find("/Type /Page"); at != std::string::npos; at = pdf.find("/Type /Page", at + 1)) {
    const std::size_t next = at + 11;
    if (next < pdf.size() && pdf[next] == 's') continue;  // /Type /Pages: the page tree
    ++n;
  }
  return n;
}

std::uint32_t Image::pixel(int x, int y) const {
  const std::size_t i =
      (static_cast<std::size_t>(y) * static_cast<std::size_t>(width) + static_cast<std::size_t>(x)) * 4;
  return (static_cast<std::uint32_t>(rgba[i]) << 24) | (static_cast<std::uint32_t>(rgba[i + 1]) << 16) |
         (static_cast<std::uint32_t>(rgba[i + 2]) << 8) | rgba[i + 3];
}

Image decode_png(const std::string& b) {
  static const std::string sig("\x89PNG\r\n\x1a\n", 8);
  if (b.size() < 8 || b.compare(0, 8, sig) != 0) throw std::runtime_error("not a PNG file");
  Image img;
  int colour_type = -1;
  std::string idat;
  for (std::size_t at = 8; at + 12 <= b.size();) {
    const std::uint32_t len = be32(b, at);
    const std::string type = b.substr(at + 4, 4);
    if (at + 12 + len > b.size()) throw std::runtime_error("PNG chunk runs past the end");
    const std::size_t data = at + 8;
    if (type == "IHDR") {
      img.width = static_cast<int>(be32(b, data));
      img.height = static_cast<int>(be32(b, data + 4));
      const int depth = static_cast<unsigned char>(b[data + 8]);
      colour_type = static_cast<unsigned char>(b[data + 9]);
      const int interlace = static_cast<unsigned char>(b[data + 12]);
      if (depth != 8 || (colour_type != 2 && colour_type != 6) || interlace != 0)
        throw std::runtime_error("PNG: only 8-bit RGB/RGBA without interlace is supported");
    } else if (type == "IDAT") {
      idat.append(b, data, len);
    } else if (type == "IEND") {
      break;
    }
    at += 12 + len;
  }
  if (img.width <= 0 || img.height <= 0) throw std::runtime_error("PNG without a header");
  const std::size_t bpp = colour_type == 6 ? 4 : 3;
  const std::size_t stride = static_cast<std::size_t>(img.width) * bpp;
  std::vector<std::uint8_t> raw(static_cast<std::size_t>(img.height) * (stride + 1));
  uLongf raw_len = static_cast<uLongf>(raw.size());
  if (uncompress(raw.data(), &raw_len, reinterpret_cast<const Bytef*>(idat.data()), static_cast<uLong>(idat.size())) !=
          Z_OK ||
      raw_len != raw.size())
    throw std::runtime_error("PNG: the image data does not inflate to its size");
  // Undo the per-row filters (None, Sub, Up, Average, Paeth).
  std::vector<std::uint8_t> px(static_cast<std::size_t>(img.height) * stride);
  for (std::size_t y = 0; y < static_cast<std::size_t>(img.height); ++y) {
    const std::uint8_t filter = raw[y * (stride + 1)];
    const std::uint8_t* in = &raw[y * (stride + 1) + 1];
    std::uint8_t* out = &px[y * stride];
    const std::uint8_t* up = y > 0 ? &px[(y - 1) * stride] : nullptr;
    for (std::size_t i = 0; i < stride; ++i) {
      const int a = i >= bpp ? out[i - bpp] : 0;
      const int u = up ? up[i] : 0;
      const int c = (up && i >= bpp) ? up[i - bpp] : 0;
      int pred = 0;
      switch (filter) {
        case 0: pred = 0; break;
        case 1: pred = a; break;
        case 2: pred = u; break;
        case 3: pred = (a + u) / 2; break;
        case 4: {
          const int p = a + u - c, pa = std::abs(p - a), pb = std::abs(p - u), pc = std::abs(p - c);
          pred = (pa <= pb && pa <= pc) ? a : (pb <= pc ? u : c);
          break;
        }
        default: throw std::runtime_error("PNG: unknown filter type " + std::to_string(filter));
      }
      out[i] = static_cast<std::uint8_t>((in[i] + pred) & 0xFF);
    }
  }
  img.rgba.resize(static_cast<std::size_t>(img.width) * static_cast<std::size_t>(img.height) * 4);
  for (std::size_t p = 0; p < static_cast<std::size_t>(img.width) * static_cast<std::size_t>(img.height); ++p) {
    img.rgba[p * 4] = px[p * bpp];
    img.rgba[p * 4 + 1] = px[p * bpp + 1];
    img.rgba[p * 4 + 2] = px[p * bpp + 2];
    img.rgba[p * 4 + 3] = bpp == 4 ? px[p * bpp + 3] : 255;
  }
  return img;
}

std::size_t distinct_colours(const Image& image) {
  std::unordered_set<std::uint32_t> seen;
  for (int y = 0; y < image.height; ++y)
    for (int x = 0; x < image.width; ++x) seen.insert(image.pixel(x, y));
  return seen.size();
}

double inked_fraction(const Image& image) {
  if (image.width == 0 || image.height == 0) return 0;
  const std::uint32_t bg = image.pixel(0, 0);
  std::size_t n = 0;
  for (int y = 0; y < image.height; ++y)
    for (int x = 0; x < image.width; ++x)
      if (image.pixel(x, y) != bg) ++n;
  return static_cast<double>(n) / (static_cast<double>(image.width) * static_cast<double>(image.height));
}

}  // namespace shelfstage::test
