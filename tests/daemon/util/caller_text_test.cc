// File: tests/daemon/util/caller_text_test.cc
#include "daemon/util/caller_text.h"

#include <string>

#include "gtest/gtest.h"

namespace plumbline::daemon {
namespace {

TEST(CallerTextTest, ShortPrintableTextIsUnchanged) {
  EXPECT_EQ(CallerText("distance_km"), "distance_km");
  EXPECT_EQ(CallerText(""), "");
  // Valid UTF-8 letters stay readable.
  EXPECT_EQ(CallerText("Stra\xc3\x9f"
                       "e"),
            "Stra\xc3\x9f"
            "e");
}

TEST(CallerTextTest, LongTextIsCutAndSaysItsLength) {
  const std::string name(9000, 'a');
  const std::string shown = CallerText(name);
  EXPECT_EQ(shown, std::string(kCallerTextBytes, 'a') + "...(9000 bytes)");
}

TEST(CallerTextTest, CutNeverSplitsACharacter) {
  // 'é' = 0xc3 0xa9: with a limit of 5 bytes, two characters (4 bytes) fit
  // and the third would cross the limit.
  const std::string text = "\xc3\xa9\xc3\xa9\xc3\xa9";
  EXPECT_EQ(CallerText(text, 5), "\xc3\xa9\xc3\xa9...(6 bytes)");
}

TEST(CallerTextTest, ControlCharactersAndBadUtf8AreEscaped) {
  EXPECT_EQ(CallerText("v1\n\x1b[31m"), "v1\\x0a\\x1b[31m");
  EXPECT_EQ(CallerText(std::string("a\0b", 3)), "a\\x00b");
  EXPECT_EQ(CallerText("\x7f"), "\\x7f");
  // A lone continuation byte, an overlong '/', a surrogate (U+D800), a
  // truncated 3-byte sequence and a code point above U+10FFFF.
  EXPECT_EQ(CallerText("\x80"), "\\x80");
  EXPECT_EQ(CallerText("\xc0\xaf"), "\\xc0\\xaf");
  EXPECT_EQ(CallerText("\xed\xa0\x80"), "\\xed\\xa0\\x80");
  EXPECT_EQ(CallerText("\xe2\x82"), "\\xe2\\x82");
  EXPECT_EQ(CallerText("\xf4\x90\x80\x80"), "\\xf4\\x90\\x80\\x80");
  // Four-byte characters are kept (U+1F600).
  EXPECT_EQ(CallerText("\xf0\x9f\x98\x80"), "\xf0\x9f\x98\x80");
}

TEST(CallerTextTest, FirstUnprintableFindsTheOffset) {
  EXPECT_EQ(FirstUnprintable("2026-12-01.1"), std::nullopt);
  EXPECT_EQ(FirstUnprintable("Stra\xc3\x9f"
                             "e"),
            std::nullopt);
  EXPECT_EQ(FirstUnprintable("v1\r"), 2u);
  EXPECT_EQ(FirstUnprintable("ab\xff"), 2u);
  EXPECT_EQ(FirstUnprintable("\t"), 0u);
}

}  // namespace
}  // namespace plumbline::daemon
