// The request-head check and the Host/Origin rules, as pure functions. The rules come
// from RFC 9112 (HTTP/1.1 message syntax) and RFC 9110 (semantics), cited per test; the
// limits are the daemon's own (server/src/http/request_head.h says why each is what it is).
#include <gtest/gtest.h>

#include "host_rules.h"
#include "request_head.h"

namespace {

using factorwatch::server::check_request_head;
using factorwatch::server::HeadCheck;
using factorwatch::server::HeadLimits;
using factorwatch::server::HostRules;
using State = HeadCheck::State;

TEST(RequestHead, ACompleteHeadEndsAtTheBlankLine) {
  const std::string head = "GET /v1/health HTTP/1.1\r\nHost: 127.0.0.1:8750\r\nAccept: */*\r\n\r\n";
  const HeadCheck c = check_request_head(head + "body bytes", HeadLimits{});
  ASSERT_EQ(c.state, State::complete) << c.detail;
  EXPECT_EQ(c.length, head.size());
}

TEST(RequestHead, EveryPrefixOfAGoodHeadIsIncomplete) {
  const std::string head = "POST /v1/returns?file=a.csv HTTP/1.1\r\nHost: localhost\r\nContent-Length: 5\r\n\r\n";
  for (std::size_t n = 0; n < head.size(); ++n)
    EXPECT_EQ(check_request_head(head.substr(0, n), HeadLimits{}).state, State::incomplete) << n;
}

// RFC 9112 section 2.2: a recipient may accept a bare LF as a line terminator, and should
// ignore at least one empty line before the request line.
TEST(RequestHead, BareLineFeedsAndALeadingEmptyLineAreAccepted) {
  EXPECT_EQ(check_request_head("\r\nGET / HTTP/1.1\nHost: x\n\n", HeadLimits{}).state, State::complete);
}

TEST(RequestHead, LimitsAreEnforcedWhileTheHeadArrives) {
  HeadLimits limits;
  const HeadCheck line = check_request_head("GET /" + std::string(limits.request_line_bytes, 'a'), limits);
  EXPECT_EQ(line.state, State::refused);
  EXPECT_EQ(line.status, 414);  // RFC 9110 section 15.5.15
  std::string many = "GET / HTTP/1.1\r\n";
  for (std::size_t i = 0; i <= limits.field_count; ++i) many += "X-" + std::to_string(i) + ": 1\r\n";
  const HeadCheck fields = check_request_head(many, limits);
  EXPECT_EQ(fields.state, State::refused);
  EXPECT_EQ(fields.status, 431);  // RFC 6585 section 5
  const HeadCheck big = check_request_head("GET / HTTP/1.1\r\nX-Big: " + std::string(limits.field_line_bytes, 'b'), limits);
  EXPECT_EQ(big.status, 431);
  std::string total = "GET / HTTP/1.1\r\n";
  while (total.size() <= limits.head_bytes) total += "X-Field: " + std::string(4000, 'c') + "\r\n";
  EXPECT_EQ(check_request_head(total, limits).status, 431);
}

TEST(RequestHead, MalformedHeadsAreRefusedWith400) {
  for (const std::string& bad : {
           std::string("GET /a\0b HTTP/1.1\r\n\r\n", 21),      // NUL in the target
           std::string("GET /\xff HTTP/1.1\r\n\r\n"),             // raw byte above 0x7f
           std::string("GET / HTTP/1.1\r\nHost : x\r\n\r\n"),     // RFC 9112 5.1: space before the colon
           std::string("GET / HTTP/1.1\r\nHost: x\r\n folded\r\n\r\n"),  // RFC 9112 5.2: obsolete folding
           std::string("GET / HTTP/1.1\r\nNoColon\r\n\r\n"),
           std::string("GET / HTTP/1.1\r\nX: a\rb\r\n\r\n"),     // bare CR inside a value
           std::string("GET / HTTP/2.0\r\n\r\n"),
           std::string("GET /\r\n\r\n"),
           std::string("G(T / HTTP/1.1\r\n\r\n"),
       }) {
    const HeadCheck c = check_request_head(bad, HeadLimits{});
    EXPECT_EQ(c.state, State::refused) << bad;
    EXPECT_EQ(c.status, 400) << bad;
    EXPECT_FALSE(c.detail.empty());
  }
}

// RFC 9110 section 14.2: a server may ignore or refuse a Range field with many ranges.
TEST(RequestHead, MoreThanOneRangeIsRefused) {
  EXPECT_EQ(check_request_head("GET / HTTP/1.1\r\nRange: bytes=0-99\r\n\r\n", HeadLimits{}).state, State::complete);
  const HeadCheck c = check_request_head("GET / HTTP/1.1\r\nrange: bytes=0-,0-,0-\r\n\r\n", HeadLimits{});
  EXPECT_EQ(c.status, 416);
  EXPECT_EQ(c.field, "Range");
}

TEST(HostRules, LoopbackNamesAndOurPortOnly) {
  const HostRules rules("127.0.0.1", 8750, {});
  for (const char* ok : {"127.0.0.1:8750", "localhost:8750", "LOCALHOST:8750", "[::1]:8750", "127.0.0.1", "localhost"})
    EXPECT_FALSE(rules.host_problem(ok)) << ok;
  for (const char* bad : {"attacker.example", "attacker.example:8750", "127.0.0.1:8751", "localhost:80x", "127.0.0.2:8750",
                          "", ":8750", "[::1", "localhost.:8750"})
    EXPECT_TRUE(rules.host_problem(bad)) << bad;
}

TEST(HostRules, ExtraNamesAndWildcardListening) {
  const HostRules named("127.0.0.1", 9000, {"Risk-Box.example"});
  EXPECT_FALSE(named.host_problem("risk-box.example:9000"));
  const HostRules everywhere("0.0.0.0", 9000, {});
  EXPECT_FALSE(everywhere.host_problem("192.0.2.7:9000"));   // an address literal cannot be rebound
  EXPECT_FALSE(everywhere.host_problem("[2001:db8::1]:9000"));
  EXPECT_TRUE(everywhere.host_problem("risk-box.example:9000"));  // a name must be named
  EXPECT_EQ(HostRules("127.0.0.1", 1, {"LOCALHOST"}).accepted_names(), "127.0.0.1, localhost, [::1]");
}

TEST(HostRules, OnlyOurOwnOriginIsAccepted) {
  const HostRules rules("127.0.0.1", 8750, {});
  EXPECT_FALSE(rules.origin_problem("http://127.0.0.1:8750"));
  EXPECT_FALSE(rules.origin_problem("http://localhost:8750"));
  for (const char* bad : {"null", "http://attacker.example", "https://127.0.0.1:8750", "http://127.0.0.1",
                          "http://127.0.0.1:8751", "file://", "http://"})
    EXPECT_TRUE(rules.origin_problem(bad)) << bad;
}

}  // namespace
