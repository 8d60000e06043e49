// Test support: renders a file in headless Chromium (Debian package `chromium`), reads back the
// screenshot (a small PNG decoder over zlib) and the console output, and asks Chromium's XML
// parser whether a document is well formed.
#pragma once
#include <cstdint>
#include <string>
#include <vector>

namespace shelfstage::test {

/// The chromium program the build found (compile definition SHELFSTAGE_CHROMIUM); throws
/// std::runtime_error when the build found none: tests that need it then fail, as CI installs it.
std::string chromium_program();

/// What one headless run left behind.
struct BrowserRun {
  std::string screenshot;            ///< PNG bytes (empty if none was written)
  std::vector<std::string> console;  ///< console messages and uncaught errors, one per line
  std::string log;                   ///< the whole stderr, for failure messages
  int exit_status = 0;
  std::string dom;  ///< as dump_dom() gives it, when asked for (RenderAlso::dom)
  std::string pdf;  ///< the PDF print's bytes, when asked for (RenderAlso::pdf; empty if none was written)
};

/// What else one render() launch is to leave behind (Chromium does each in the same run, so
/// a page checked three ways starts the browser once, not three times).
struct RenderAlso {
  bool dom = false;  ///< the DOM after loading (--dump-dom)
  /// The page printed as Chromium does for paper (--print-to-pdf: the print stylesheet
  /// applies), without Chromium's header and footer.
  bool pdf = false;
};

/// Loads file:///path in a fresh profile (--headless --no-sandbox --disable-gpu --no-first-run
/// --disable-background-networking ...), takes a screenshot of width x height and collects
/// every console line; with `also`, the DOM and the PDF print as well. Throws
/// std::runtime_error if the program cannot be started.
BrowserRun render(const std::string& path, int width, int height, RenderAlso also = {});

/// The DOM after loading, as Chromium serialises it (--dump-dom). For an .svg or .xhtml file
/// Chromium parses with its XML parser and inserts a <parsererror> element when the file is
/// not well formed.
std::string dump_dom(const std::string& path);

/// The number of pages of a PDF as Chromium writes it (its /Type /Page objects).
int pdf_pages(const std::string& pdf);

/// An 8-bit RGB or RGBA image, 4 bytes per pixel (alpha 255 for RGB).
struct Image {
  int width = 0, height = 0;
  std::vector<std::uint8_t> rgba;
  std::uint32_t pixel(int x, int y) const;
};

/// Decodes a PNG (ISO/IEC 15948: non-interlaced, 8-bit RGB or RGBA, every filter type).
/// Throws std::runtime_error for anything else.
Image decode_png(const std::string& bytes);

/// The number of distinct pixel values (a blank page has one).
std::size_t distinct_colours(const Image& image);

/// The fraction of pixels that differ from the top-left pixel (the page background).
double inked_fraction(const Image& image);

}  // namespace shelfstage::test
