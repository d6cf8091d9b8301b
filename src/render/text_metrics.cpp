#include "render/text_metrics.hpp"

#include "render/figure_style.hpp"
#include "render/pango_text.hpp"

namespace habcast {

TextExtent measure_text(const std::string& text, const TextStyle& style) {
  const pango_text::LayoutPtr layout = pango_text::measuring_layout(text, style);
  const pango_text::LayoutBox box = pango_text::layout_box(layout.get());
  return {box.width, box.baseline, box.height - box.baseline};
}

std::vector<std::string> wrap_text(const std::string& text, const TextStyle& style, double width) {
  std::vector<std::string> lines;
  std::string line, word;
  auto flush_word = [&] {
    if (word.empty()) return;
    const std::string candidate = line.empty() ? word : line + " " + word;
    if (!line.empty() && measure_text(candidate, style).width > width) {
      lines.push_back(line);
      line = word;
    } else {
      line = candidate;
    }
    word.clear();
  };
  for (char ch : text) {
    if (ch == ' ') flush_word();
    else word += ch;
  }
  flush_word();
  if (!line.empty()) lines.push_back(line);
  return lines;
}

std::string resolved_font_family() {
  const pango_text::LayoutPtr layout = pango_text::measuring_layout("Ag", figure_style::legend());
  PangoContext* context = pango_layout_get_context(layout.get());
  PangoFontDescription* wanted = pango_font_description_copy(pango_layout_get_font_description(layout.get()));
  PangoFont* font = pango_context_load_font(context, wanted);
  pango_font_description_free(wanted);
  if (!font) return {};
  PangoFontDescription* got = pango_font_describe(font);
  const char* family = pango_font_description_get_family(got);
  std::string result = family ? family : "";
  pango_font_description_free(got);
  g_object_unref(font);
  return result;
}

}  // namespace habcast
