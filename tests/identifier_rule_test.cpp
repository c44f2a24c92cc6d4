// The one identifier rule (storage/identifier_rule.h) and every reader that applies it:
// returns files (wide header, long `asset` column, also as text in memory, an upload),
// holdings files (CSV, JSON with its \u escapes, also as text in memory) and model
// universes (file and configuration). Each refusal names file, line and field.
//
// Names are invented (ZQ-...). Code points: The Unicode Standard 15.0, chapter 23
// (controls U+0000-U+001F, U+007F-U+009F; format characters U+200B-U+200F, U+2028,
// U+2029, U+202A-U+202E, U+2066-U+2069, U+FEFF).
#include <gtest/gtest.h>

#include <string>
#include <vector>

#include "factorwatch/storage/identifier_rule.h"
#include "factorwatch/storage/input_error.h"
#include "factorwatch/storage/models.h"
#include "factorwatch/storage/portfolios.h"
#include "factorwatch/storage/returns_csv.h"
#include "storage_fixtures.h"

namespace {

namespace fw = factorwatch::storage;
namespace fwt = factorwatch::testing;
using fw::InputError;

const std::string kNul("\0", 1);

// The reader must throw InputError at `line` naming `field`, with `words` in the message.
template <typename Read>
void expect_refused(Read read, const std::string& label, std::size_t line, const std::string& field,
                    const std::string& words) {
  try {
    read();
    ADD_FAILURE() << label << ": accepted";
  } catch (const InputError& e) {
    EXPECT_EQ(e.line(), line) << label << ": " << e.what();
    EXPECT_EQ(e.field(), field) << label << ": " << e.what();
    EXPECT_NE(std::string(e.what()).find(words), std::string::npos) << label << ": " << e.what();
    // The message shows the name escaped: no raw control byte reaches a terminal.
    for (unsigned char b : std::string(e.what())) EXPECT_TRUE(b >= 0x20 && b != 0x7f) << label << ": " << e.what();
  }
}

TEST(IdentifierRule, AcceptsPrintableNamesOfAnyScript) {
  const std::vector<std::string> names = {
      "ZQ-0001",      "x'); DROP TABLE returns;--", "a/b",         "..\\c",       "semi;colon",
      "comma, inside", "quote \"q\"",               "Zürich Fonds", "東京-0001",    "ZQ 0001 (class A)",
      "%s%n",          "$(rm -rf x)",                "<b>bold</b>",  std::string(fw::kLongestIdentifier, 'x')};
  for (const std::string& name : names)
    EXPECT_FALSE(fw::identifier_problem(name).has_value()) << name << ": " << *fw::identifier_problem(name);
}

TEST(IdentifierRule, RefusesEachKindOfBadName) {
  const struct {
    std::string name, words;
  } cases[] = {
      {"", "is empty"},
      {"ZQ" + kNul + "a", "'ZQ\\x00a' holds a control character (U+0000) at position 3"},
      {"ZQ\n1", "holds a control character (U+000A) at position 3"},
      {"ZQ\r", "holds a control character (U+000D) at position 3"},
      {"ZQ\t1", "holds a control character (U+0009)"},
      {"\x1b[31mZQ", "'\\x1B[31mZQ' holds a control character (U+001B) at position 1"},
      {"ZQ\x7f", "holds a control character (U+007F)"},
      {"ZQ\xc2\x80", "holds a control character (U+0080)"},
      {"ZQ\xc2\x9b" "2J", "'ZQ\\u009B2J' holds a control character (U+009B)"},
      {"ZQ\xc2\x9f", "holds a control character (U+009F)"},
      {"Z\xe2\x80\x8bQ", "holds an invisible formatting character (U+200B) at position 2"},
      {"\xe2\x80\xaeZQ", "holds an invisible formatting character (U+202E)"},
      {"ZQ\xe2\x81\xa6", "holds an invisible formatting character (U+2066)"},
      {"ZQ\xe2\x80\xa8", "holds an invisible formatting character (U+2028)"},
      {"ZQ\xef\xbb\xbf", "holds an invisible formatting character (U+FEFF)"},
      {" ZQ", "starts with a space"},
      {"ZQ ", "ends with a space"},
      {"\xc2\xa0ZQ", "starts with a space"},
      {"ZQ\xc2\xa0", "ends with a space"},
      {"ZQ\xe9", "is not valid UTF-8 (byte 0xE9 at position 3)"},
      {"\xc0\xae", "is not valid UTF-8 (byte 0xC0 at position 1)"},
      {std::string(fw::kLongestIdentifier + 1, 'x'), "is 129 bytes long, more than the limit of 128"},
  };
  for (const auto& c : cases) {
    const auto problem = fw::identifier_problem(c.name);
    ASSERT_TRUE(problem.has_value()) << fw::printable_text(c.name);
    EXPECT_NE(problem->find(c.words), std::string::npos) << *problem;
    // The message shows the name escaped: no raw control byte reaches a terminal.
    for (unsigned char b : *problem) EXPECT_TRUE(b >= 0x20 && b != 0x7f) << *problem;
  }
}

TEST(IdentifierRule, PrintableTextEscapesOnlyWhatATerminalWouldObey) {
  EXPECT_EQ(fw::printable_text("ZQ-0001 a/b ..\\c 'q' \"d\" Zürich"), "ZQ-0001 a/b ..\\c 'q' \"d\" Zürich");
  EXPECT_EQ(fw::printable_text("\x1b[2J" + kNul + "\n\x7f"), "\\x1B[2J\\x00\\x0A\\x7F");
  EXPECT_EQ(fw::printable_text("a\xc2\x9b" "b\xe2\x80\xae"), "a\\u009Bb\\u202E");
  EXPECT_EQ(fw::printable_text("ok\xff\xc3"), "ok\\xFF\\xC3");  // malformed bytes, one by one
  EXPECT_EQ(fw::printable_text("é\xe2\x82"), "é\\xE2\\x82");     // a cut character at the end
}

// --- returns files -----------------------------------------------------------------

class IdentifierReaders : public ::testing::Test {
 protected:
  std::string write(const std::string& name, const std::string& bytes) {
    const std::string path = dir_.file(name);
    fwt::write_text(path, bytes);
    return path;
  }
  fwt::TempDir dir_;
};

TEST_F(IdentifierReaders, ReturnsWideHeaderNamesTheColumn) {
  const std::string path = write("w.csv", "date,ZQ-1,\"ZQ-2\x1b]0;title\x07\"\n2024-01-02,0.1,0.2\n");
  expect_refused([&] { fw::read_returns_file(path, {}); }, "wide", 1, "column 3",
                 "the asset name 'ZQ-2\\x1B]0;title\\x07' holds a control character (U+001B) at position 5");
  const std::string spaced = write("s.csv", "date,ZQ-1,\"ZQ-1 \"\n2024-01-02,0.1,0.2\n");
  expect_refused([&] { fw::read_returns_file(spaced, {}); }, "wide space", 1, "column 3", "ends with a space");
}

TEST_F(IdentifierReaders, ReturnsLongColumnNamesTheLine) {
  const std::string path =
      write("l.csv", "date,asset,return\n2024-01-02,ZQ-1,0.1\n2024-01-02,\"ZQ\n2\",0.2\n");
  expect_refused([&] { fw::read_returns_file(path, {}); }, "long", 3, "asset",
                 "holds a control character (U+000A) at position 3");
}

TEST_F(IdentifierReaders, UploadedReturnsFollowTheSameRules) {
  // read_returns_text is the daemon's upload path: the same rule, with the upload's name.
  expect_refused(
      [&] { fw::read_returns_text("date,asset,return\n2024-01-02,ZQ\xc2\x85,0.1\n", "upload.csv", {}); },
      "upload", 2, "asset", "holds a control character (U+0085)");
  expect_refused(
      [&] { fw::read_returns_text("date,asset,return\n2024-01-02,ZQ" + kNul + "a,0.1\n", "upload.csv", {}); },
      "upload NUL", 2, "", "a NUL byte (0x00) at column 14");
}

TEST_F(IdentifierReaders, LongButAllowedNamesAreKeptExactly) {
  const std::string longest(fw::kLongestIdentifier, 'L');
  const std::string path = write("ok.csv", "date,asset,return\n2024-01-02," + longest +
                                               ",0.1\n2024-01-02,\"x'); DROP TABLE returns;--\",0.2\n"
                                               "2024-01-02,\"a,\"\"b\"\"\",0.3\n");
  const auto file = fw::read_returns_file(path, {});
  EXPECT_EQ(file.panel.assets,
            (std::vector<std::string>{longest, "x'); DROP TABLE returns;--", "a,\"b\""}));
}

// --- holdings files ----------------------------------------------------------------

fw::PortfolioFileOptions book() { return {"book", factorwatch::testing::day("2024-01-31"), ""}; }

TEST_F(IdentifierReaders, HoldingsCsvNamesTheLine) {
  expect_refused([&] { fw::parse_portfolio_text("asset,weight\nZQ-1,0.5\n\"ZQ\x1b[0m\",0.5\n", "h.csv", book()); },
                 "holdings CSV", 3, "asset", "holds a control character (U+001B) at position 3");
  expect_refused(
      [&] { fw::parse_portfolio_text("asset,weight\nZQ-1,0.5\nZQ" + kNul + "b,0.5\n", "h.csv", book()); },
      "holdings CSV NUL", 3, "asset", "'ZQ\\x00b' holds a control character (U+0000)");
  const std::string path = write("h.csv", "asset,weight\nZQ-1,0.5\nZQ" + kNul + "b,0.5\n");
  expect_refused([&] { fw::read_portfolio_file(path, book()); }, "holdings file NUL", 3, "",
                 "a NUL byte (0x00) at column 3");
}

TEST_F(IdentifierReaders, HoldingsJsonEscapesAreDecodedThenChecked) {
  // JSON may spell a NUL or ESC as \u0000 / \u001b: the decoded name is what is checked.
  expect_refused(
      [&] { fw::parse_portfolio_text("{\"weights\": {\"ZQ\": 0.5,\n\"ZQ\\u0000a\": 0.5}}\n", "h.json", book()); },
      "weights NUL", 2, "asset", "'ZQ\\x00a' holds a control character (U+0000) at position 3");
  expect_refused(
      [&] {
        fw::parse_portfolio_text("{\"holdings\": [\n{\"asset\": \"ZQ\\u001b[31m\", \"weight\": 1}]}\n", "h.json",
                                 book());
      },
      "holdings ESC", 2, "asset", "holds a control character (U+001B)");
  expect_refused(
      [&] { fw::parse_portfolio_text("{\"weights\": {\"ZQ\\u009b2J\": 1}}", "h.json", book()); }, "C1", 1, "asset",
      "holds a control character (U+009B)");
  expect_refused(
      [&] { fw::parse_portfolio_text("{\"weights\": {\"\\u202eZQ\": 1}}", "h.json", book()); }, "bidi", 1, "asset",
      "holds an invisible formatting character (U+202E)");
  expect_refused(
      [&] { fw::parse_portfolio_text("{\"weights\": {\"ZQ \": 1}}", "h.json", book()); }, "space", 1, "asset",
      "ends with a space");
}

// --- model universes ---------------------------------------------------------------

TEST_F(IdentifierReaders, UniverseFileAndConfigurationFollowTheRule) {
  const std::string path = write("u.txt", "asset\nZQ-1\nZQ\x1b[2J\n");
  expect_refused([&] { fw::read_universe_file(path); }, "universe file", 3, "asset",
                 "holds a control character (U+001B)");
  fw::ModelConfig config;
  config.universe = {"ZQ-1", "ZQ" + kNul + "a"};
  const auto failure = config.FirstFailure();
  ASSERT_TRUE(failure);
  EXPECT_EQ(failure->field, "universe");
  EXPECT_NE(failure->rule.find("the asset name 'ZQ\\x00a' holds a control character"), std::string::npos)
      << failure->rule;
}

}  // namespace
