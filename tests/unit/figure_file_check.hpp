#pragma once
// Checks of picture files that do not compare images byte for byte (Cairo's output changes
// between versions): the PNG signature and size (PNG spec, ISO/IEC 15948, sections 5.2 and 11.2.2),
// SVG parsed by GDAL's XML parser (CPLParseXMLString), the PDF header and trailer (ISO 32000-1,
// 7.5.2 and 7.5.5), and pixels of a PNG decoded by GDAL's PNG driver (libpng), not by us.
#include <cpl_minixml.h>
#include <gdal_priv.h>

#include <array>
#include <cstdint>
#include <string>
#include <vector>

#include "raster/gdal_session.hpp"
#include "render/colour_ramp.hpp"

namespace habcast::test {

inline bool has_png_signature(const std::string& bytes) {
  static const std::string signature("\x89PNG\r\n\x1a\n", 8);
  return bytes.size() > 33 && bytes.compare(0, 8, signature) == 0 && bytes.compare(12, 4, "IHDR") == 0;
}

/// Width and height from the IHDR chunk (big-endian 32-bit integers at bytes 16 and 20).
inline std::array<std::uint32_t, 2> png_size(const std::string& bytes) {
  auto be32 = [&](std::size_t at) {
    std::uint32_t v = 0;
    for (std::size_t i = 0; i < 4; ++i) v = (v << 8) | static_cast<unsigned char>(bytes[at + i]);
    return v;
  };
  return {be32(16), be32(20)};
}

/// True when GDAL's XML parser accepts the text and its root element is <svg>.
inline bool parses_as_svg(const std::string& text) {
  CPLPushErrorHandler(CPLQuietErrorHandler);  // a rejected document is an answer, not a message
  CPLXMLNode* root = CPLParseXMLString(text.c_str());
  CPLPopErrorHandler();
  if (!root) return false;
  bool svg = false;
  for (CPLXMLNode* n = root; n; n = n->psNext)
    if (n->eType == CXT_Element && std::string(n->pszValue) == "svg") svg = true;
  CPLDestroyXMLNode(root);
  return svg;
}

inline bool looks_like_pdf(const std::string& bytes) {
  if (bytes.rfind("%PDF-1.", 0) != 0) return false;
  const std::size_t eof = bytes.rfind("%%EOF");
  return eof != std::string::npos && eof + 10 > bytes.size() && bytes.rfind("startxref") != std::string::npos &&
         bytes.find("trailer") != std::string::npos;
}

/// A decoded PNG: width, height and RGB pixels band-interleaved by pixel.
struct DecodedPng {
  int width = 0, height = 0;
  std::vector<std::uint8_t> rgb;
  std::string metadata_title, metadata_software;  ///< the PNG's text chunks, as GDAL reports them
  [[nodiscard]] Rgb at(int x, int y) const {
    const std::size_t i = 3 * (static_cast<std::size_t>(y) * static_cast<std::size_t>(width) + static_cast<std::size_t>(x));
    return {rgb[i], rgb[i + 1], rgb[i + 2]};
  }
};

inline DecodedPng decode_png(const std::string& bytes) {
  ensure_gdal();
  static int serial = 0;
  const std::string name = "/vsimem/decode_png_" + std::to_string(++serial) + ".png";
  VSILFILE* f = VSIFileFromMemBuffer(name.c_str(), reinterpret_cast<GByte*>(const_cast<char*>(bytes.data())), bytes.size(), FALSE);
  VSIFCloseL(f);
  DecodedPng out;
  GDALDataset* ds = static_cast<GDALDataset*>(GDALOpen(name.c_str(), GA_ReadOnly));
  if (ds) {
    auto item = [&](const char* key) {
      const char* v = ds->GetMetadataItem(key);
      return std::string(v ? v : "");
    };
    out.metadata_title = item("Title");
    out.metadata_software = item("Software");
    out.width = ds->GetRasterXSize();
    out.height = ds->GetRasterYSize();
    out.rgb.resize(3 * static_cast<std::size_t>(out.width) * static_cast<std::size_t>(out.height));
    int bands[3] = {1, 2, 3};
    if (ds->GetRasterCount() < 3 || ds->RasterIO(GF_Read, 0, 0, out.width, out.height, out.rgb.data(), out.width, out.height, GDT_Byte, 3,
                                                 bands, 3, 3 * out.width, 1, nullptr) != CE_None)
      out = {};
    GDALClose(ds);
  }
  VSIUnlink(name.c_str());
  return out;
}

inline bool same_colour(Rgb a, Rgb b, int tolerance = 1) {
  auto near = [&](int x, int y) { return x - y <= tolerance && y - x <= tolerance; };
  return near(a.r, b.r) && near(a.g, b.g) && near(a.b, b.b);
}

}  // namespace habcast::test
