// Finishes the surface of the requested format around the one painter (figure_painter.cpp).
#include "render/figure_file.hpp"

#include <cairo-pdf.h>
#include <cairo-svg.h>
#include <cairo.h>
#include <zlib.h>

#include <algorithm>
#include <cctype>
#include <cmath>
#include <filesystem>
#include <cstdint>
#include <utility>
#include <vector>

#include "core/base/error.hpp"
#include "render/figure_painter.hpp"

namespace habcast {

namespace {

using figure_painter::CairoPtr;
using figure_painter::SurfacePtr;
using figure_painter::checked_image;
using figure_painter::paint_figure;

cairo_status_t append(void* closure, const unsigned char* data, unsigned int length) {
  static_cast<std::string*>(closure)->append(reinterpret_cast<const char*>(data), length);
  return CAIRO_STATUS_SUCCESS;
}

void check(cairo_t* cr, cairo_surface_t* surface, const char* what) {
  cairo_status_t status = cairo_status(cr);
  if (status == CAIRO_STATUS_SUCCESS) status = cairo_surface_status(surface);
  if (status != CAIRO_STATUS_SUCCESS)
    throw IoError(std::string("drawing the ") + what + " failed: " + cairo_status_to_string(status));
}

std::string vector_file(const Figure& figure, FigureFormat format) {
  std::string bytes;
  SurfacePtr surface(format == FigureFormat::svg
                         ? cairo_svg_surface_create_for_stream(append, &bytes, figure.width(), figure.height())
                         : cairo_pdf_surface_create_for_stream(append, &bytes, figure.width(), figure.height()));
  if (format == FigureFormat::svg) {
    cairo_svg_surface_restrict_to_version(surface.get(), CAIRO_SVG_VERSION_1_1);
    cairo_svg_surface_set_document_unit(surface.get(), CAIRO_SVG_UNIT_PT);
  } else {
    if (!figure.title.empty()) cairo_pdf_surface_set_metadata(surface.get(), CAIRO_PDF_METADATA_TITLE, figure.title.c_str());
    if (!figure.subject.empty()) cairo_pdf_surface_set_metadata(surface.get(), CAIRO_PDF_METADATA_SUBJECT, figure.subject.c_str());
    cairo_pdf_surface_set_metadata(surface.get(), CAIRO_PDF_METADATA_CREATOR, "habcast");
  }
  {
    CairoPtr cr(cairo_create(surface.get()));
    paint_figure(cr.get(), figure);
    check(cr.get(), surface.get(), format == FigureFormat::svg ? "SVG" : "PDF");
  }
  cairo_surface_finish(surface.get());
  if (cairo_surface_status(surface.get()) != CAIRO_STATUS_SUCCESS)
    throw IoError(std::string("finishing the figure failed: ") + cairo_status_to_string(cairo_surface_status(surface.get())));
  return bytes;
}

/// `png` with international text chunks (iTXt, UTF-8; PNG specification, ISO/IEC 15948, 11.3.4.5)
/// inserted after the IHDR chunk, so the file says what it shows and what drew it. Cairo's PNG
/// writer has no place for text.
std::string with_text_chunks(const std::string& png, const std::vector<std::pair<std::string, std::string>>& entries) {
  constexpr std::size_t kAfterHeader = 8 + 4 + 4 + 13 + 4;  // signature, then IHDR: length, type, 13 bytes, CRC
  std::string chunks;
  auto be32 = [](std::uint32_t v) {
    return std::string{static_cast<char>(v >> 24), static_cast<char>(v >> 16), static_cast<char>(v >> 8), static_cast<char>(v)};
  };
  for (const auto& [key, text] : entries) {
    if (text.empty()) continue;
    // keyword, NUL, compression flag 0, method 0, empty language tag, NUL, empty translated keyword, NUL, text
    const std::string body = "iTXt" + key + std::string(3, '\0') + std::string(2, '\0') + text;
    const auto crc = crc32(0L, reinterpret_cast<const Bytef*>(body.data()), static_cast<uInt>(body.size()));
    chunks += be32(static_cast<std::uint32_t>(body.size() - 4)) + body + be32(static_cast<std::uint32_t>(crc));
  }
  return png.substr(0, kAfterHeader) + chunks + png.substr(kAfterHeader);
}

std::string png_file(const Figure& figure, double dpi) {
  const int w = png_pixels(figure.width(), dpi), h = png_pixels(figure.height(), dpi);
  SurfacePtr surface = checked_image(CAIRO_FORMAT_RGB24, w, h);
  {
    CairoPtr cr(cairo_create(surface.get()));
    cairo_scale(cr.get(), dpi / 72.0, dpi / 72.0);
    paint_figure(cr.get(), figure);
    check(cr.get(), surface.get(), "PNG");
  }
  std::string bytes;
  const cairo_status_t status = cairo_surface_write_to_png_stream(surface.get(), append, &bytes);
  if (status != CAIRO_STATUS_SUCCESS) throw IoError(std::string("encoding the PNG failed: ") + cairo_status_to_string(status));
  return with_text_chunks(bytes, {{"Title", figure.title}, {"Description", figure.subject}, {"Software", "habcast"}});
}

}  // namespace

FigureFormat figure_format(const std::string& path) {
  std::string ext = std::filesystem::path(path).extension().string();
  std::transform(ext.begin(), ext.end(), ext.begin(), [](unsigned char c) { return static_cast<char>(std::tolower(c)); });
  if (ext == ".svg") return FigureFormat::svg;
  if (ext == ".png") return FigureFormat::png;
  if (ext == ".pdf") return FigureFormat::pdf;
  throw UsageError(path + ": a picture's format follows its extension; use .svg, .png or .pdf");
}

int png_pixels(double points, double png_dpi) { return static_cast<int>(std::ceil(points * png_dpi / 72.0 - 1e-9)); }

std::string encode_figure(const Figure& figure, FigureFormat format, double png_dpi) {
  if (format == FigureFormat::png) return png_file(figure, png_dpi);
  return vector_file(figure, format);
}

std::string encode_figure(const Figure& figure, const std::string& path) { return encode_figure(figure, figure_format(path)); }

}  // namespace habcast
