// A holdings file in JSON:
//   {"as_of": "yyyy-mm-dd", "benchmark": "name",
//    "weights": {"ASSET": 0.1, ...}  or  "holdings": [{"asset": "ASSET", "weight": 0.1}, ...]}
//
// Why a SAX pass into a small tree of our own rather than nlohmann's DOM: every problem
// must name its line, and the DOM keeps no positions; nlohmann also keeps the last of two
// equal keys without a word, and a weight given twice must be an error. The SAX events
// come with no position either, so the parser reads through an iterator that remembers
// how far it got: at each event that is just past the token the event is about.
#include <cmath>
#include <cstdio>
#include <iterator>
#include <nlohmann/json.hpp>
#include <unordered_map>
#include <utility>
#include <vector>

#include "cell_parse.h"
#include "factorwatch/storage/input_error.h"
#include "factorwatch/storage/portfolios.h"
#include "holdings_file.h"
#include "utf8_check.h"

namespace factorwatch::storage::detail {
namespace {

constexpr const char* kMembers =
    "a holdings JSON file has the members as_of, benchmark, and weights or holdings";

struct JsonMember;

// A value with the line it starts on; objects keep their members in file order, repeats
// included (the checks below name both lines of a repeat).
struct JsonNode {
  enum class Kind { null, boolean, number, string, object, array } kind = Kind::null;
  std::size_t line = 0;
  std::string text;  // a string's value, or a number as written
  double number = 0;
  std::vector<JsonMember> members;
  std::vector<JsonNode> items;
};

struct JsonMember {
  std::string key;
  std::size_t line = 0;
  JsonNode value;
};

const char* kind_name(JsonNode::Kind kind) {
  switch (kind) {
    case JsonNode::Kind::null: return "null";
    case JsonNode::Kind::boolean: return "true or false";
    case JsonNode::Kind::number: return "a number";
    case JsonNode::Kind::string: return "a string";
    case JsonNode::Kind::object: return "an object";
    case JsonNode::Kind::array: return "an array";
  }
  return "a value";
}

// A char iterator that records the furthest position the parser has read.
class TrackedChar {
 public:
  using iterator_category = std::input_iterator_tag;
  using value_type = char;
  using difference_type = std::ptrdiff_t;
  using pointer = const char*;
  using reference = const char&;

  TrackedChar(const char* at, const char** furthest) : at_(at), furthest_(furthest) {}
  reference operator*() const { return *at_; }
  TrackedChar& operator++() {
    ++at_;
    if (at_ > *furthest_) *furthest_ = at_;
    return *this;
  }
  TrackedChar operator++(int) {
    TrackedChar before = *this;
    ++*this;
    return before;
  }
  bool operator==(const TrackedChar& other) const { return at_ == other.at_; }
  bool operator!=(const TrackedChar& other) const { return at_ != other.at_; }

 private:
  const char* at_;
  const char** furthest_;
};

// Line numbers of byte offsets asked for in ascending order (the parser only moves on).
class LineCounter {
 public:
  explicit LineCounter(std::string_view text) : text_(text) {}
  // Line of the byte at `offset` (0-based); past the end, the last line with text.
  std::size_t line_of(std::size_t offset) {
    if (offset >= text_.size()) {
      offset = text_.size();
      if (offset > 0 && text_[offset - 1] == '\n') --offset;
    }
    if (offset < done_) return line_of_slow(offset);
    for (; done_ < offset; ++done_)
      if (text_[done_] == '\n') ++line_;
    return line_;
  }

 private:
  std::size_t line_of_slow(std::size_t offset) const {
    std::size_t line = 1;
    for (std::size_t i = 0; i < offset; ++i) line += text_[i] == '\n';
    return line;
  }
  std::string_view text_;
  std::size_t done_ = 0;
  std::size_t line_ = 1;
};

// nlohmann's description quotes the bytes it last read ("...; last read: '1}}<U+000A>m';
// expected ..."): noise next to a line number, and raw bytes of a malformed string would
// make the message itself invalid UTF-8 (messages end up in JSON). Drop that part, and
// show any byte still malformed as \xNN.
std::string without_last_read(std::string what) {
  const std::size_t from = what.find("; last read: '");
  if (from != std::string::npos) {
    const std::size_t expected = what.rfind("; expected ");
    const std::size_t to = expected != std::string::npos && expected > from ? expected : what.size();
    what.erase(from, to - from);
  }
  while (auto bad = first_invalid_utf8(what)) {
    char hex[8];
    std::snprintf(hex, sizeof hex, "\\x%02X", static_cast<unsigned>(static_cast<unsigned char>(what[*bad])));
    what.replace(*bad, 1, hex);
  }
  return what;
}

// Builds the tree. Containers deeper than the format ever goes (file, weights or holdings,
// one holding) are kept as a node without their content: enough to say "must be a number,
// not an object", and a hostile file nested a million deep costs no stack.
class TreeBuilder : public nlohmann::json_sax<nlohmann::json> {
 public:
  TreeBuilder(std::string_view text, const std::string& path, const char** furthest)
      : begin_(text.data()), path_(path), furthest_(furthest), lines_(text) {}

  JsonNode root;

  bool null() override { return add(JsonNode::Kind::null); }
  bool boolean(bool) override { return add(JsonNode::Kind::boolean); }
  bool number_integer(number_integer_t v) override { return add_number(static_cast<double>(v), std::to_string(v)); }
  bool number_unsigned(number_unsigned_t v) override { return add_number(static_cast<double>(v), std::to_string(v)); }
  bool number_float(number_float_t v, const string_t& text) override { return add_number(v, text); }
  bool string(string_t& s) override {
    JsonNode* node = place(JsonNode::Kind::string);
    if (node != nullptr) node->text = std::move(s);
    return true;
  }
  bool binary(binary_t&) override { return add(JsonNode::Kind::null); }  // not produced by JSON text
  bool start_object(std::size_t) override { return open(JsonNode::Kind::object); }
  bool end_object() override { return close(); }
  bool start_array(std::size_t) override { return open(JsonNode::Kind::array); }
  bool end_array() override { return close(); }
  bool key(string_t& k) override {
    if (skipped_ == 0) {
      key_ = std::move(k);
      key_line_ = line_now();
    }
    return true;
  }

  bool parse_error(std::size_t position, const std::string& last_token, const nlohmann::detail::exception& e) override {
    // `position` counts the bytes read, the offending one included (nlohmann's
    // position_t::chars_read_total); the line is that byte's.
    const std::size_t line = lines_.line_of(position > 0 ? position - 1 : 0);
    if (e.id == 406) {  // a number too large for a double, e.g. 1e999
      const bool in_weights =
          stack_.size() == 2 && !root.members.empty() && root.members.back().key == "weights";
      const std::string field = in_weights ? "weight" : key_;
      const std::string prefix = in_weights ? "asset " + detail::quoted(key_) + ": " : "";
      throw InputError(path_, line, field, prefix + detail::quoted(last_token) + " is not a finite number");
    }
    // nlohmann's text reads "[json.exception.parse_error.101] parse error at line 3,
    // column 5: syntax error while parsing ..."; keep what follows the position.
    std::string what = e.what();
    const std::size_t column = what.find(", column ");
    const std::size_t colon = column == std::string::npos ? std::string::npos : what.find(": ", column);
    if (colon != std::string::npos) what = what.substr(colon + 2);
    throw InputError(path_, line, "", "not valid JSON: " + without_last_read(what));
  }

 private:
  std::size_t line_now() {
    const std::size_t read = static_cast<std::size_t>(*furthest_ - begin_);
    return lines_.line_of(read > 0 ? read - 1 : 0);  // the last byte read belongs to the token
  }

  // The new value's place: the root, an array's next item or the pending key's member.
  JsonNode* place(JsonNode::Kind kind) {
    if (skipped_ > 0) return nullptr;
    JsonNode* node = nullptr;
    if (stack_.empty()) {
      node = &root;
    } else if (stack_.back()->kind == JsonNode::Kind::array) {
      node = &stack_.back()->items.emplace_back();
    } else {
      JsonMember& m = stack_.back()->members.emplace_back();
      m.key = std::move(key_);
      m.line = key_line_;
      node = &m.value;
    }
    node->kind = kind;
    node->line = line_now();
    return node;
  }
  bool add(JsonNode::Kind kind) {
    place(kind);
    return true;
  }
  bool add_number(double value, std::string text) {
    JsonNode* node = place(JsonNode::Kind::number);
    if (node != nullptr) node->number = value, node->text = std::move(text);
    return true;
  }
  bool open(JsonNode::Kind kind) {
    JsonNode* node = place(kind);
    if (node == nullptr || stack_.size() == kKeptDepth)
      ++skipped_;
    else
      stack_.push_back(node);
    return true;
  }
  bool close() {
    if (skipped_ > 0)
      --skipped_;
    else
      stack_.pop_back();
    return true;
  }

  static constexpr std::size_t kKeptDepth = 3;
  const char* begin_;
  const std::string& path_;
  const char** furthest_;
  LineCounter lines_;
  std::vector<JsonNode*> stack_;
  std::size_t skipped_ = 0;
  std::string key_;
  std::size_t key_line_ = 0;
};

// Checks the tree against the format and collects the holdings.
class HoldingsReader {
 public:
  explicit HoldingsReader(const std::string& path) : path_(path) {}

  HoldingsFile read(const JsonNode& root) {
    HoldingsFile file;
    file.end_line = root.line;
    if (root.kind != JsonNode::Kind::object)
      fail(root.line, "", std::string("a holdings JSON file is one object: ") + kMembers);
    const JsonMember* list = nullptr;
    std::unordered_map<std::string, std::size_t> seen;
    for (const JsonMember& m : root.members) {
      auto [at, fresh] = seen.emplace(m.key, m.line);
      if (!fresh) fail(m.line, m.key, "member given twice (lines " + lines(at->second, m.line) + ")");
      if (m.key == "as_of") {
        const std::string text = optional_text(m);
        file.as_of_line = m.line;
        if (!text.empty()) {
          file.as_of = engine::Date::from_iso(text);
          if (!file.as_of) fail(m.value.line, m.key, detail::quoted(text) + " is not a date in the form yyyy-mm-dd");
        }
      } else if (m.key == "benchmark") {
        file.benchmark = optional_text(m);
        file.benchmark_line = m.line;
      } else if (m.key == "weights" || m.key == "holdings") {
        if (list != nullptr)
          fail(m.line, m.key, "give either weights or holdings, not both ('" + list->key + "' is on line " +
                                  std::to_string(list->line) + ")");
        list = &m;
      } else {
        fail(m.line, m.key, std::string("unknown member: ") + kMembers);
      }
    }
    if (list == nullptr) fail(root.line, "", std::string("no weights or holdings: ") + kMembers);
    if (list->key == "weights")
      read_weights(*list, file.holdings);
    else
      read_holdings(*list, file.holdings);
    if (file.holdings.empty()) fail(list->line, list->key, "no holdings: the " + kind_word(*list) + " is empty");
    return file;
  }

 private:
  [[noreturn]] void fail(std::size_t line, const std::string& field, const std::string& problem) const {
    throw InputError(path_, line, field, problem);
  }
  static std::string lines(std::size_t a, std::size_t b) { return std::to_string(a) + " and " + std::to_string(b); }
  static std::string kind_word(const JsonMember& m) { return m.key == "weights" ? "object" : "array"; }

  // A string member that may also be null (= not given); an empty string is a mistake.
  std::string optional_text(const JsonMember& m) const {
    if (m.value.kind == JsonNode::Kind::null) return "";
    if (m.value.kind != JsonNode::Kind::string)
      fail(m.value.line, m.key, std::string("must be a string, not ") + kind_name(m.value.kind));
    if (m.value.text.empty()) fail(m.value.line, m.key, "is empty (leave the member out instead)");
    return m.value.text;
  }

  double weight_of(const JsonNode& value, const std::string& asset) const {
    const std::string whose = "asset " + detail::quoted(asset) + ": ";
    if (value.kind != JsonNode::Kind::number)
      fail(value.line, "weight", whose + "the weight must be a number, not " + kind_name(value.kind));
    if (!std::isfinite(value.number))
      fail(value.line, "weight", whose + detail::quoted(value.text) + " is not a finite number");
    if (const std::string problem = weight_problem(value.number); !problem.empty())
      fail(value.line, "weight", whose + "the weight " + detail::quoted(value.text) + " " + problem);
    return stored_weight(value.number);
  }

  void add(engine::Holdings& out, std::string asset, double weight, std::size_t line) {
    auto [at, fresh] = first_line_.emplace(asset, line);
    if (!fresh) fail(line, "asset", twice_problem(asset, at->second, line));
    out.push_back({std::move(asset), weight});
  }

  void read_weights(const JsonMember& list, engine::Holdings& out) {
    if (list.value.kind != JsonNode::Kind::object)
      fail(list.value.line, list.key,
           std::string("must be an object {\"ASSET\": weight, ...}, not ") + kind_name(list.value.kind));
    for (const JsonMember& m : list.value.members) {
      check_asset_name(m.key, path_, m.line, "asset");
      add(out, m.key, weight_of(m.value, m.key), m.line);
    }
  }

  void read_holdings(const JsonMember& list, engine::Holdings& out) {
    if (list.value.kind != JsonNode::Kind::array)
      fail(list.value.line, list.key,
           std::string("must be an array [{\"asset\": \"ASSET\", \"weight\": weight}, ...], not ") +
               kind_name(list.value.kind));
    for (const JsonNode& item : list.value.items) {
      if (item.kind != JsonNode::Kind::object)
        fail(item.line, list.key,
             std::string("each holding is an object {\"asset\": \"ASSET\", \"weight\": weight}, not ") +
                 kind_name(item.kind));
      const JsonMember* asset = nullptr;
      const JsonMember* weight = nullptr;
      for (const JsonMember& m : item.members) {
        const JsonMember** slot = m.key == "asset" ? &asset : m.key == "weight" ? &weight : nullptr;
        if (slot == nullptr) fail(m.line, m.key, "unknown member: a holding has the members asset and weight");
        if (*slot != nullptr) fail(m.line, m.key, "member given twice (lines " + lines((*slot)->line, m.line) + ")");
        *slot = &m;
      }
      if (asset == nullptr) fail(item.line, "asset", "the holding has no asset");
      if (asset->value.kind != JsonNode::Kind::string)
        fail(asset->value.line, "asset", std::string("must be a string, not ") + kind_name(asset->value.kind));
      check_asset_name(asset->value.text, path_, asset->value.line, "asset");
      if (weight == nullptr)
        fail(item.line, "weight", "asset " + detail::quoted(asset->value.text) + ": the holding has no weight");
      add(out, asset->value.text, weight_of(weight->value, asset->value.text), asset->line);
    }
  }

  const std::string& path_;
  std::unordered_map<std::string, std::size_t> first_line_;  // asset -> line of its first holding
};

}  // namespace

HoldingsFile read_holdings_json(std::string_view text, const std::string& path) {
  const char* furthest = text.data();
  TreeBuilder builder(text, path, &furthest);
  const TrackedChar first(text.data(), &furthest);
  const TrackedChar last(text.data() + text.size(), &furthest);
  // strict: nothing but blanks after the object. Comments are not JSON and are refused.
  // parse_error above throws, so a false return is not expected; kept as a guard.
  if (!nlohmann::json::sax_parse(first, last, &builder, nlohmann::json::input_format_t::json, true, false))
    throw InputError(path, 0, "", "not valid JSON");
  return HoldingsReader(path).read(builder.root);
}

}  // namespace factorwatch::storage::detail
