// File: tests/daemon/charts/xml_dom.h
//
// A small element tree parsed with expat (Debian's libexpat), so the chart
// tests check that every SVG is well-formed XML and read back its ids,
// attributes and text. Test-only.
//
//   absl::StatusOr<std::unique_ptr<XmlElement>> root = ParseXml(svg);
//   ASSERT_TRUE(root.ok()) << root.status();
//   std::vector<const XmlElement*> bins = (*root)->FindAll("g", "class",
//   "bin");
//
// Thread-compatible.
#ifndef PLUMBLINE_TESTS_DAEMON_CHARTS_XML_DOM_H_
#define PLUMBLINE_TESTS_DAEMON_CHARTS_XML_DOM_H_

#include <map>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"

namespace plumbline::charts::testing {

struct XmlElement {
  std::string name;
  std::map<std::string, std::string> attributes;
  std::string text;  // character data directly inside this element
  std::vector<std::unique_ptr<XmlElement>> children;

  // The attribute's value, or nullopt.
  std::optional<std::string> Attribute(const std::string& key) const;
  // This element and its descendants, in document order, named `name`
  // ("" for any) and, when `key` is not empty, with attribute key == value.
  std::vector<const XmlElement*> FindAll(absl::string_view element_name,
                                         const std::string& key = "",
                                         absl::string_view value = "") const;
  // Text of this element and all descendants, in document order.
  std::string AllText() const;
  // The first child element named `name`, or nullptr.
  const XmlElement* Child(absl::string_view element_name) const;
};

// INVALID_ARGUMENT with expat's message, line and column when `xml` is not
// well-formed.
absl::StatusOr<std::unique_ptr<XmlElement>> ParseXml(absl::string_view xml);

}  // namespace plumbline::charts::testing

#endif  // PLUMBLINE_TESTS_DAEMON_CHARTS_XML_DOM_H_
