#pragma once
// A strict little XML reader for tests: checks well-formedness (one root, matching tags, quoted
// attributes without duplicates, only the five predefined entities or character references, no
// '<' or stray '&' in text) and returns the element tree so tests can count what was drawn. Enough
// for the SVG habcast writes; not a general XML parser (no DTDs, no CDATA).
#include <cctype>
#include <map>
#include <memory>
#include <stdexcept>
#include <string>
#include <vector>

namespace habcast::test {

struct XmlElement {
  std::string name;
  std::map<std::string, std::string> attributes;
  std::vector<std::unique_ptr<XmlElement>> children;
  std::string text;

  /// Every element below (and including) this one with the given name.
  void collect(const std::string& tag, std::vector<const XmlElement*>& out) const {
    if (name == tag) out.push_back(this);
    for (const auto& c : children) c->collect(tag, out);
  }
  [[nodiscard]] std::vector<const XmlElement*> all(const std::string& tag) const {
    std::vector<const XmlElement*> out;
    collect(tag, out);
    return out;
  }
  [[nodiscard]] std::string attribute(const std::string& key) const {
    const auto it = attributes.find(key);
    return it == attributes.end() ? "" : it->second;
  }
};

class XmlReader {
 public:
  explicit XmlReader(std::string text) : s_(std::move(text)) {}

  /// Parses the whole document; throws std::runtime_error with the offset of the first problem.
  std::unique_ptr<XmlElement> parse() {
    skip_prolog();
    if (!at('<')) fail("expected the root element");
    auto root = element();
    skip_misc();
    if (i_ != s_.size()) fail("content after the root element");
    return root;
  }

 private:
  [[noreturn]] void fail(const std::string& what) const {
    throw std::runtime_error("XML not well-formed at offset " + std::to_string(i_) + ": " + what);
  }
  bool at(char c) const { return i_ < s_.size() && s_[i_] == c; }
  bool starts(const std::string& p) const { return s_.compare(i_, p.size(), p) == 0; }
  void skip_space() {
    while (i_ < s_.size() && std::isspace(static_cast<unsigned char>(s_[i_]))) ++i_;
  }
  void skip_until(const std::string& end) {
    const auto p = s_.find(end, i_);
    if (p == std::string::npos) fail("unterminated " + end);
    i_ = p + end.size();
  }
  void skip_misc() {
    for (;;) {
      skip_space();
      if (starts("<!--")) skip_until("-->");
      else if (starts("<?")) skip_until("?>");
      else return;
    }
  }
  void skip_prolog() {
    if (starts("<?xml")) skip_until("?>");
    skip_misc();
  }
  std::string name() {
    const std::size_t start = i_;
    auto ok = [](char c) { return std::isalnum(static_cast<unsigned char>(c)) || c == '_' || c == ':' || c == '-' || c == '.'; };
    if (i_ >= s_.size() || !(std::isalpha(static_cast<unsigned char>(s_[i_])) || s_[i_] == '_')) fail("expected a name");
    while (i_ < s_.size() && ok(s_[i_])) ++i_;
    return s_.substr(start, i_ - start);
  }
  std::string characters(char stop) {
    std::string out;
    while (i_ < s_.size() && s_[i_] != stop) {
      if (s_[i_] == '<') fail("'<' inside text or attribute");
      if (s_[i_] == '&') {
        const auto semi = s_.find(';', i_);
        if (semi == std::string::npos) fail("unterminated entity");
        const std::string e = s_.substr(i_ + 1, semi - i_ - 1);
        if (e == "amp") out += '&';
        else if (e == "lt") out += '<';
        else if (e == "gt") out += '>';
        else if (e == "quot") out += '"';
        else if (e == "apos") out += '\'';
        else if (e.size() > 1 && e[0] == '#') out += '?';
        else fail("unknown entity &" + e + ";");
        i_ = semi + 1;
      } else {
        out += s_[i_++];
      }
    }
    return out;
  }
  std::unique_ptr<XmlElement> element() {
    ++i_;  // '<'
    auto e = std::make_unique<XmlElement>();
    e->name = name();
    for (;;) {
      skip_space();
      if (starts("/>")) {
        i_ += 2;
        return e;
      }
      if (at('>')) {
        ++i_;
        break;
      }
      const std::string key = name();
      skip_space();
      if (!at('=')) fail("attribute " + key + " without '='");
      ++i_;
      skip_space();
      if (!at('"') && !at('\'')) fail("attribute " + key + " not quoted");
      const char quote = s_[i_++];
      const std::string value = characters(quote);
      if (!at(quote)) fail("unterminated attribute " + key);
      ++i_;
      if (!e->attributes.emplace(key, value).second) fail("duplicate attribute " + key);
    }
    for (;;) {
      e->text += characters('<');
      if (i_ >= s_.size()) fail("element <" + e->name + "> not closed");
      if (starts("</")) {
        i_ += 2;
        if (name() != e->name) fail("closing tag does not match <" + e->name + ">");
        skip_space();
        if (!at('>')) fail("malformed closing tag");
        ++i_;
        return e;
      }
      if (starts("<!--")) {
        skip_until("-->");
        continue;
      }
      e->children.push_back(element());
    }
  }

  std::string s_;
  std::size_t i_ = 0;
};

}  // namespace habcast::test
