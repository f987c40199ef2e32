#include "tests/daemon/charts/xml_dom.h"

#include <expat.h>

#include <limits>
#include <utility>

#include "absl/strings/str_cat.h"

namespace plumbline::charts::testing {
namespace {

struct Builder {
  std::unique_ptr<XmlElement> root;
  std::vector<XmlElement*> stack;
};

void OnStart(void* data, const XML_Char* name, const XML_Char** attributes) {
  auto* b = static_cast<Builder*>(data);
  auto element = std::make_unique<XmlElement>();
  element->name = name;
  for (int i = 0; attributes[i] != nullptr; i += 2) {
    element->attributes[attributes[i]] = attributes[i + 1];
  }
  XmlElement* raw = element.get();
  if (b->stack.empty()) {
    b->root = std::move(element);
  } else {
    b->stack.back()->children.push_back(std::move(element));
  }
  b->stack.push_back(raw);
}

void OnEnd(void* data, const XML_Char*) {
  static_cast<Builder*>(data)->stack.pop_back();
}

void OnText(void* data, const XML_Char* s, int len) {
  auto* b = static_cast<Builder*>(data);
  if (!b->stack.empty())
    b->stack.back()->text.append(s, static_cast<size_t>(len));
}

void Collect(const XmlElement& e, absl::string_view name,
             const std::string& key, absl::string_view value,
             std::vector<const XmlElement*>* out) {
  if (name.empty() || e.name == name) {
    if (key.empty()) {
      out->push_back(&e);
    } else {
      auto it = e.attributes.find(key);
      if (it != e.attributes.end() && it->second == value) out->push_back(&e);
    }
  }
  for (const auto& child : e.children) Collect(*child, name, key, value, out);
}

void AppendText(const XmlElement& e, std::string* out) {
  // Character data and children interleave; the tree keeps them apart, so
  // this is the element's own text, then its children's.
  *out += e.text;
  for (const auto& child : e.children) AppendText(*child, out);
}

}  // namespace

std::optional<std::string> XmlElement::Attribute(const std::string& key) const {
  auto it = attributes.find(key);
  if (it == attributes.end()) return std::nullopt;
  return it->second;
}

std::vector<const XmlElement*> XmlElement::FindAll(
    absl::string_view element_name, const std::string& key,
    absl::string_view value) const {
  std::vector<const XmlElement*> out;
  Collect(*this, element_name, key, value, &out);
  return out;
}

std::string XmlElement::AllText() const {
  std::string out;
  AppendText(*this, &out);
  return out;
}

const XmlElement* XmlElement::Child(absl::string_view element_name) const {
  for (const auto& child : children) {
    if (child->name == element_name) return child.get();
  }
  return nullptr;
}

absl::StatusOr<std::unique_ptr<XmlElement>> ParseXml(absl::string_view xml) {
  if (xml.size() > static_cast<size_t>(std::numeric_limits<int>::max())) {
    return absl::InvalidArgumentError("document too large for expat");
  }
  XML_Parser parser = XML_ParserCreate("UTF-8");
  Builder builder;
  XML_SetUserData(parser, &builder);
  XML_SetElementHandler(parser, OnStart, OnEnd);
  XML_SetCharacterDataHandler(parser, OnText);
  const XML_Status status =
      XML_Parse(parser, xml.data(), static_cast<int>(xml.size()), 1);
  absl::Status result;
  if (status != XML_STATUS_OK) {
    result = absl::InvalidArgumentError(absl::StrCat(
        "not well-formed XML: ", XML_ErrorString(XML_GetErrorCode(parser)),
        " at line ", XML_GetCurrentLineNumber(parser), " column ",
        XML_GetCurrentColumnNumber(parser)));
  }
  XML_ParserFree(parser);
  if (!result.ok()) return result;
  if (builder.root == nullptr) {
    return absl::InvalidArgumentError("no root element");
  }
  return std::move(builder.root);
}

}  // namespace plumbline::charts::testing
