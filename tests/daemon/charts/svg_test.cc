// Tests of daemon/charts/svg.h: escaping, UTF-8 repair, ellipsis and the
// writer, each output parsed back with expat (xml_dom.h).
#include "daemon/charts/svg.h"

#include <string>

#include "gtest/gtest.h"
#include "tests/daemon/charts/xml_dom.h"

namespace plumbline::charts {
namespace {

using testing::ParseXml;

constexpr char kFffd[] = "\xEF\xBF\xBD";

TEST(SvgEscapeTest, EscapesTheFiveXmlSpecialCharacters) {
  EXPECT_EQ(EscapeText("a<b>&\"c\"'"), "a&lt;b&gt;&amp;&quot;c&quot;&apos;");
  EXPECT_EQ(EscapeAttribute("<&>"), "&lt;&amp;&gt;");
}

TEST(SvgEscapeTest, KeepsLineBreaksInTextAndReferencesThemInAttributes) {
  EXPECT_EQ(EscapeText("a\tb\nc"), "a\tb\nc");
  EXPECT_EQ(EscapeAttribute("a\tb\nc\rd"), "a&#9;b&#10;c&#13;d");
}

TEST(SvgEscapeTest, ReplacesIllFormedUtf8AndForbiddenCharacters) {
  // A lone continuation byte, a truncated sequence, an overlong '/', a
  // UTF-16 surrogate encoded in UTF-8, a control character and U+FFFE.
  EXPECT_EQ(SanitizeUtf8("a\x80"
                         "b"),
            std::string("a") + kFffd + "b");
  EXPECT_EQ(SanitizeUtf8("\xE2\x82"), std::string(kFffd) + kFffd);
  EXPECT_EQ(SanitizeUtf8("\xC0\xAF"), std::string(kFffd) + kFffd);
  EXPECT_EQ(SanitizeUtf8("\xED\xA0\x80"), std::string(kFffd) + kFffd + kFffd);
  EXPECT_EQ(SanitizeUtf8(std::string("x\x01y\0z", 5)),
            std::string("x") + kFffd + "y" + kFffd + "z");
  EXPECT_EQ(SanitizeUtf8("\xEF\xBF\xBE"), kFffd);
  // Well-formed text of 1 to 4 bytes per character passes unchanged.
  const std::string good = "caf\xC3\xA9 \xE2\x82\xAC \xF0\x9F\x93\xA6";
  EXPECT_EQ(SanitizeUtf8(good), good);
  EXPECT_EQ(CharCount(good), 8u);
}

TEST(SvgEscapeTest, EllipsizeCutsWholeCharactersAndEndsWithAnEllipsis) {
  EXPECT_EQ(Ellipsize("rainfall_mm", 20), "rainfall_mm");
  EXPECT_EQ(Ellipsize("rainfall_mm", 11), "rainfall_mm");
  EXPECT_EQ(Ellipsize("rainfall_mm", 5), "rain\xE2\x80\xA6");
  // Four characters of two bytes each: the cut never splits one.
  EXPECT_EQ(Ellipsize("\xC3\xA9\xC3\xA9\xC3\xA9\xC3\xA9", 3),
            "\xC3\xA9\xC3\xA9\xE2\x80\xA6");
  EXPECT_EQ(Ellipsize("ab cd", 4), "ab\xE2\x80\xA6");  // no blank before it
  EXPECT_EQ(Ellipsize("abc", 1), "\xE2\x80\xA6");
}

TEST(SvgWriterTest, WritesNestedElementsThatParseBack) {
  const std::string hostile =
      "<script>alert(\"x\")</script> & 'more'\t\nline\x01";
  SvgWriter w;
  w.Open("svg", {{"xmlns", "http://www.w3.org/2000/svg"}, {"id", "c"}});
  w.TextElement("title", {}, hostile);
  w.Leaf("rect", {{"data-name", hostile}, {"width", "10"}});
  w.TextWithTooltip("text", {{"x", "1"}}, "short", hostile);
  EXPECT_EQ(w.depth(), 1u);
  w.Close();
  const std::string svg = std::move(w).Release();
  absl::StatusOr<std::unique_ptr<testing::XmlElement>> root = ParseXml(svg);
  ASSERT_TRUE(root.ok()) << root.status() << "\n" << svg;
  EXPECT_EQ((*root)->name, "svg");
  EXPECT_EQ((*root)->Child("title")->text, SanitizeUtf8(hostile));
  EXPECT_EQ((*root)->Child("rect")->Attribute("data-name"),
            SanitizeUtf8(hostile));
  const testing::XmlElement* text = (*root)->Child("text");
  ASSERT_NE(text, nullptr);
  EXPECT_EQ(text->text, "short");
  EXPECT_EQ(text->Child("title")->text, SanitizeUtf8(hostile));
  EXPECT_EQ(svg.find("<script"), std::string::npos);
}

}  // namespace
}  // namespace plumbline::charts
