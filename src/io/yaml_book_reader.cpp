#include "firmcall/io/yaml_book_reader.hpp"

#include <yaml-cpp/yaml.h>
#include <yaml.h>

#include <algorithm>
#include <array>
#include <bitset>
#include <cerrno>
#include <cmath>
#include <cstring>
#include <optional>
#include <unordered_map>
#include <unordered_set>
#include <vector>

#include "firmcall/book/errors.hpp"
#include "firmcall/io/csv.hpp"
#include "io/yaml_util.hpp"

namespace firmcall {

namespace {

// Unknown keys named in an obligor's error before the rest are counted.
constexpr std::size_t kListedUnknownKeys = 5;

// Bytes that are not UTF-8 are read as this noncharacter (U+FDD0), so that the parser, which
// accepts UTF-8 only, reads on and the field that holds them is reported by name.
constexpr std::string_view kNotUtf8Mark = "\xEF\xB7\x90";
constexpr std::string_view kReplacementChar = "\xEF\xBF\xBD";

enum class Kind : std::uint8_t {
  stream_start,
  stream_end,
  doc_start,
  doc_end,
  scalar,
  seq_start,
  seq_end,
  map_start,
  map_end,
  alias
};

// One event: `text` is a scalar's value or an alias's name, valid until the next event is taken.
struct Event {
  Kind kind = Kind::stream_end;
  std::size_t line = 0;
  std::string_view text;
  bool null = false;  // a plain scalar that YAML reads as null (empty, ~, null)
  bool starts() const noexcept { return kind == Kind::seq_start || kind == Kind::map_start; }
  bool ends() const noexcept { return kind == Kind::seq_end || kind == Kind::map_end; }
};

struct StoredEvent {
  Kind kind;
  bool null;
  std::size_t line;
  std::string text;
};
using StoredNode = std::vector<StoredEvent>;

constexpr std::array<std::string_view, 5> kTopKeys = {"book", "as_of", "description", "defaults", "obligors"};
// In the order of read_defaults' entries.
constexpr std::array<std::string_view, 5> kDefaultKeys = {"rate", "horizon", "drift", "default_point_weight",
                                                          "lgd"};

bool is_null_plain(std::string_view s) {
  return s.empty() || s == "~" || s == "null" || s == "Null" || s == "NULL";
}

bool all_digits(std::string_view s) {
  return !s.empty() && s.find_first_not_of("0123456789") == std::string_view::npos;
}

std::string comma_problem(const std::string& field, const std::string& number) {
  return "field '" + field + "': a comma inside the number '" + number.substr(0, 40) +
         "' (YAML ends a value at a comma); write numbers without thousands separators and with a "
         "decimal point (1200, 0.35)";
}

// Length of the UTF-8 sequence at p (at most n bytes), 0 when it is not one.
std::size_t utf8_length(const unsigned char* p, std::size_t n) {
  const unsigned char c = p[0];
  std::size_t len = 0;
  unsigned min = 0;
  unsigned cp = 0;
  if (c >= 0xC2 && c <= 0xDF) {
    len = 2, cp = c & 0x1Fu, min = 0x80;
  } else if (c >= 0xE0 && c <= 0xEF) {
    len = 3, cp = c & 0x0Fu, min = 0x800;
  } else if (c >= 0xF0 && c <= 0xF4) {
    len = 4, cp = c & 0x07u, min = 0x10000;
  } else {
    return 0;
  }
  if (n < len) return 0;
  for (std::size_t i = 1; i < len; ++i) {
    if ((p[i] & 0xC0u) != 0x80u) return 0;
    cp = (cp << 6) | (p[i] & 0x3Fu);
  }
  if (cp < min || cp > 0x10FFFF || (cp >= 0xD800 && cp <= 0xDFFF)) return 0;
  return len;
}

}  // namespace

struct YamlBookReader::Impl {
  std::string origin;
  YamlBookPart part = YamlBookPart::whole_book;
  std::size_t line_offset = 0;  // added to the parser's 0-based lines, less one
  yaml_parser_t parser{};
  yaml_event_t event{};
  bool have_event = false;

  // Input, made valid UTF-8 on the way in.
  std::string_view text;
  std::size_t text_pos = 0;
  std::FILE* file = nullptr;
  std::string raw;           // bytes read from the file, not yet handed to the parser
  std::size_t raw_used = 0;  // of raw
  bool file_eof = false;
  std::string cleaned;  // valid UTF-8, not yet handed to the parser
  std::size_t cleaned_pos = 0;

  // Anchors: the events of every anchored node; recorders in progress; replays in progress.
  std::unordered_map<std::string, std::shared_ptr<StoredNode>> anchors;
  struct Recorder {
    std::string name;
    std::shared_ptr<StoredNode> node;
    std::size_t depth = 0;
  };
  std::vector<Recorder> recording;
  std::size_t anchored_events = 0;
  struct Replay {
    std::shared_ptr<StoredNode> node;
    std::size_t pos = 0;
  };
  std::vector<Replay> replays;
  std::size_t raw_events = 0, replayed_events = 0;
  std::size_t depth = 0;

  // The book.
  std::string label, as_of;
  BookDefaults defaults;
  bool defaults_after = false;
  bool handed_out = false;
  enum class State : std::uint8_t { obligors, done } state = State::done;
  std::unordered_set<std::string> top_keys;
  bool saw_obligors = false;

  // Scratch of read_obligor.
  std::string key, value;
  std::unordered_set<std::string> unknown_seen;

  ~Impl() {
    if (have_event) yaml_event_delete(&event);
    yaml_parser_delete(&parser);
  }

  [[noreturn]] void fail(std::size_t line, const std::string& message) const {
    throw InputError(located(origin, line, message));
  }

  // ---- input -------------------------------------------------------------------------------

  // Appends src[used, stop) to dst as valid UTF-8, other bytes marked; advances `used`. A sequence
  // cut by `stop` waits for the next block unless `last`.
  static void clean(const char* src, std::size_t stop, std::size_t& used, std::string& dst, bool last) {
    while (used < stop) {
      const auto* p = reinterpret_cast<const unsigned char*>(src + used);
      if (*p < 0x80) {
        std::size_t run = 1;  // a run of ASCII at once
        while (used + run < stop && p[run] < 0x80) ++run;
        dst.append(src + used, run);
        used += run;
        continue;
      }
      const std::size_t len = utf8_length(p, stop - used);
      if (len == 0 && !last && stop - used < 4) return;  // may be completed by the next block
      if (len == 0) {
        dst.append(kNotUtf8Mark);
        used += 1;
      } else {
        dst.append(src + used, len);
        used += len;
      }
    }
  }

  // Refills `cleaned` from the text or the file; false at the end of the input.
  bool refill() {
    constexpr std::size_t kBlock = 1 << 16;
    cleaned.clear();
    cleaned_pos = 0;
    if (file == nullptr) {
      const std::size_t stop = std::min(text.size(), text_pos + kBlock);
      clean(text.data(), stop, text_pos, cleaned, stop == text.size());
      if (cleaned.empty() && text_pos < text.size()) clean(text.data(), text.size(), text_pos, cleaned, true);
      return !cleaned.empty();
    }
    while (cleaned.empty()) {
      if (!file_eof) {
        raw.erase(0, raw_used);
        raw_used = 0;
        const std::size_t old = raw.size();
        raw.resize(old + kBlock);
        const std::size_t got = std::fread(raw.data() + old, 1, kBlock, file);
        raw.resize(old + got);
        if (got < kBlock) file_eof = true;
      }
      clean(raw.data(), raw.size(), raw_used, cleaned, file_eof);
      if (file_eof && cleaned.empty()) return false;
    }
    return true;
  }

  static int read_input(void* data, unsigned char* buffer, std::size_t size, std::size_t* size_read) {
    auto& self = *static_cast<Impl*>(data);
    *size_read = 0;
    if (self.cleaned_pos == self.cleaned.size() && !self.refill()) {
      return self.file != nullptr && std::ferror(self.file) ? 0 : 1;
    }
    const std::size_t n = std::min(size, self.cleaned.size() - self.cleaned_pos);
    std::memcpy(buffer, self.cleaned.data() + self.cleaned_pos, n);
    self.cleaned_pos += n;
    *size_read = n;
    return 1;
  }

  void init() {
    if (yaml_parser_initialize(&parser) == 0) throw InputError("out of memory reading '" + origin + "'");
    yaml_parser_set_input(&parser, &Impl::read_input, this);
  }

  // ---- events ------------------------------------------------------------------------------

  std::size_t line_of(const yaml_mark_t& m) const { return m.line + 1 + line_offset; }

  void parse_error() {
    if (file != nullptr && std::ferror(file)) {
      throw InputError("cannot read file '" + origin + "': " + std::strerror(errno));
    }
    std::string what = "not valid YAML: ";
    if (parser.context != nullptr) what += std::string(parser.context) + ", ";
    what += parser.problem != nullptr ? parser.problem : "cannot be parsed";
    fail(line_of(parser.problem_mark), what);
  }

  void record(const Event& e) {
    if (recording.empty()) return;
    anchored_events += recording.size();
    if (anchored_events > kMaxYamlAnchoredEvents) {
      fail(e.line, "anchored nodes (&name) hold more than " + std::to_string(kMaxYamlAnchoredEvents) +
                       " YAML events; write the obligors out instead of repeating them by alias");
    }
    for (Recorder& r : recording) {
      r.node->push_back(StoredEvent{e.kind, e.null, e.line, std::string(e.text)});
      if (e.starts()) ++r.depth;
      if (e.ends()) --r.depth;
    }
    while (!recording.empty() && recording.back().depth == 0) {
      anchors[recording.back().name] = std::move(recording.back().node);
      recording.pop_back();
    }
  }

  // The next event of the parser.
  Event pull_raw() {
    if (have_event) {
      yaml_event_delete(&event);
      have_event = false;
    }
    if (yaml_parser_parse(&parser, &event) == 0) parse_error();
    have_event = true;
    ++raw_events;
    Event e;
    e.line = line_of(event.start_mark);
    const char* anchor = nullptr;
    switch (event.type) {
      case YAML_STREAM_START_EVENT:
        e.kind = Kind::stream_start;
        break;
      case YAML_STREAM_END_EVENT:
        e.kind = Kind::stream_end;
        break;
      case YAML_DOCUMENT_START_EVENT:
        e.kind = Kind::doc_start;
        break;
      case YAML_DOCUMENT_END_EVENT:
        e.kind = Kind::doc_end;
        break;
      case YAML_SCALAR_EVENT:
        e.kind = Kind::scalar;
        e.text = std::string_view(reinterpret_cast<const char*>(event.data.scalar.value),
                                  event.data.scalar.length);
        e.null = event.data.scalar.style == YAML_PLAIN_SCALAR_STYLE && is_null_plain(e.text) &&
                 event.data.scalar.tag == nullptr;
        anchor = reinterpret_cast<const char*>(event.data.scalar.anchor);
        break;
      case YAML_SEQUENCE_START_EVENT:
        e.kind = Kind::seq_start;
        anchor = reinterpret_cast<const char*>(event.data.sequence_start.anchor);
        break;
      case YAML_SEQUENCE_END_EVENT:
        e.kind = Kind::seq_end;
        break;
      case YAML_MAPPING_START_EVENT:
        e.kind = Kind::map_start;
        anchor = reinterpret_cast<const char*>(event.data.mapping_start.anchor);
        break;
      case YAML_MAPPING_END_EVENT:
        e.kind = Kind::map_end;
        break;
      case YAML_ALIAS_EVENT:
        e.kind = Kind::alias;
        e.text = reinterpret_cast<const char*>(event.data.alias.anchor);
        if (anchors.find(std::string(e.text)) == anchors.end()) {
          fail(e.line,
               "not valid YAML: the alias '*" + std::string(e.text) + "' names no anchor defined before it");
        }
        break;
      case YAML_NO_EVENT:
        e.kind = Kind::stream_end;
        break;
    }
    if (e.starts() && ++depth > kMaxYamlDepth) {
      fail(e.line,
           "not valid YAML: collections nested deeper than " + std::to_string(kMaxYamlDepth) + " levels");
    }
    if (e.ends()) --depth;
    if (anchor != nullptr) {
      recording.push_back(Recorder{anchor, std::make_shared<StoredNode>(), 0});
    }
    record(e);
    return e;
  }

  enum class Expand : std::uint8_t { none, scalars, maps, all };

  // The next event; an alias is replaced by its node when `expand` covers the node's kind.
  Event pull(Expand expand) {
    Event e;
    if (!replays.empty()) {
      Replay& r = replays.back();
      const StoredEvent& s = (*r.node)[r.pos++];
      e.kind = s.kind;
      e.line = s.line;
      e.text = s.text;
      e.null = s.null;
      if (r.pos == r.node->size()) replays_to_pop_ = true;
    } else {
      e = pull_raw();
    }
    if (replays_to_pop_) {
      // The node's last event is in `e`; its storage stays alive in `finished_`.
      finished_ = std::move(replays.back().node);
      replays.pop_back();
      replays_to_pop_ = false;
    }
    if (e.kind != Kind::alias) return e;
    const auto it = anchors.find(std::string(e.text));
    if (it == anchors.end()) {
      fail(e.line,
           "not valid YAML: the alias '*" + std::string(e.text) + "' names no anchor defined before it");
    }
    const Kind target = it->second->front().kind;
    const bool wanted = expand == Expand::all || (expand == Expand::maps && target != Kind::seq_start) ||
                        (expand == Expand::scalars && target == Kind::scalar);
    if (!wanted) return e;  // skipped by the caller as one node
    replayed_events += it->second->size();
    if (replayed_events > kMaxYamlAliasEvents + raw_events) {
      fail(e.line, "aliases (*name) expand to more than " + std::to_string(kMaxYamlAliasEvents) +
                       " YAML events beyond those of the file; write the obligors out");
    }
    replays.push_back(Replay{it->second, 0});
    return pull(expand);
  }

  // Skips the rest of a node whose first event is `first` (aliases inside are not expanded).
  void skip(const Event& first) {
    if (!first.starts()) return;
    std::size_t open = 1;
    while (open > 0) {
      const Event e = pull(Expand::none);
      if (e.starts()) ++open;
      if (e.ends()) --open;
      if (e.kind == Kind::stream_end) return;
    }
  }

  bool replays_to_pop_ = false;
  std::shared_ptr<StoredNode> finished_;

  // ---- the book ----------------------------------------------------------------------------

  void start() {
    Event e = pull(Expand::none);  // stream start
    e = pull(Expand::none);
    if (part == YamlBookPart::obligor_items) {
      if (e.kind == Kind::stream_end) return;
      e = pull(Expand::none);
      if (e.kind != Kind::seq_start) fail(e.line, "expected a list of obligors");
      state = State::obligors;
      return;
    }
    if (e.kind == Kind::stream_end) fail(0, "expected a map with an 'obligors' list");
    e = pull(Expand::all);  // the root
    if (e.kind != Kind::map_start) fail(0, "expected a map with an 'obligors' list");
    read_top_keys();
  }

  // Reads top-level keys until the obligors list starts (state obligors) or the file ends.
  void read_top_keys() {
    while (true) {
      Event k = pull(Expand::scalars);
      if (k.kind == Kind::map_end) break;
      const std::size_t key_line = k.line;
      std::string name;
      if (k.kind == Kind::scalar && !k.null) {
        name = std::string(k.text);
      } else {
        skip(k);
      }
      if (!top_keys.insert(name).second) fail(key_line, "book: key '" + name + "' is given twice");
      if (std::find(kTopKeys.begin(), kTopKeys.end(), name) == kTopKeys.end()) {
        std::string msg = "book: unknown key '" + name + "'";
        const std::string hint =
            detail::closest_name(name, {"book", "as_of", "description", "defaults", "obligors"});
        if (!hint.empty()) msg += " (did you mean '" + hint + "'?)";
        fail(key_line, msg);
      }
      if (name == "book" || name == "as_of") {
        const Event v = pull(Expand::scalars);
        if (v.kind != Kind::scalar || v.null) fail(v.line, "key '" + name + "': expected a single value");
        (name == "book" ? label : as_of) = std::string(v.text);
      } else if (name == "description") {
        skip(pull(Expand::none));
      } else if (name == "defaults") {
        read_defaults();
      } else {  // obligors
        saw_obligors = true;
        const Event v = pull(Expand::all);
        if (v.kind != Kind::seq_start) fail(v.line, "'obligors' must be a list");
        state = State::obligors;
        return;
      }
    }
    finish_document();
  }

  void finish_document() {
    state = State::done;
    if (part == YamlBookPart::obligor_items) {
      pull(Expand::none);  // document end
      pull(Expand::none);  // stream end
      return;
    }
    if (!saw_obligors) fail(0, "missing key 'obligors' (the list of obligors)");
    pull(Expand::none);  // document end
    const Event e = pull(Expand::none);
    if (e.kind == Kind::doc_start) {
      fail(e.line,
           "a second YAML document starts here; a file holds one document (remove the '---' line, or split "
           "the "
           "file)");
    }
  }

  double defaults_number(const std::string& name, const std::string& given, bool scalar,
                         std::size_t line) const {
    if (!scalar) fail(line, "key '" + name + "': expected a single value");
    double v = 0.0;
    bool ok = false;
    try {
      v = YAML::Node(given).as<double>();  // the same reading of a number as the other YAML files
      ok = std::isfinite(v);
    } catch (const YAML::Exception&) {
      ok = false;
    }
    if (!ok) fail(line, "key '" + name + "': expected a finite number, got '" + given + "'");
    return v;
  }

  void read_defaults() {
    const Event m = pull(Expand::maps);
    if (m.kind != Kind::map_start) {
      skip(m);
      fail(m.line, "defaults: expected a map of key: value");
    }
    struct Entry {
      std::string text;
      bool scalar = false;
      std::size_t line = 0;
      bool given = false;
    };
    std::array<Entry, 5> entries;
    std::unordered_set<std::string> seen;
    while (true) {
      const Event k = pull(Expand::scalars);
      if (k.kind == Kind::map_end) break;
      std::string name;
      if (k.kind == Kind::scalar && !k.null) {
        name = std::string(k.text);
      } else {
        skip(k);
      }
      if (!seen.insert(name).second) fail(k.line, "defaults: key '" + name + "' is given twice");
      const auto it = std::find(kDefaultKeys.begin(), kDefaultKeys.end(), name);
      if (it == kDefaultKeys.end()) {
        std::string msg = "defaults: unknown key '" + name + "'";
        const std::string hint =
            detail::closest_name(name, {"rate", "horizon", "drift", "default_point_weight", "lgd"});
        if (!hint.empty()) msg += " (did you mean '" + hint + "'?)";
        fail(k.line, msg);
      }
      Entry& en = entries[static_cast<std::size_t>(it - kDefaultKeys.begin())];
      const Event v = pull(Expand::scalars);
      en.given = true;
      en.line = v.line;
      en.scalar = v.kind == Kind::scalar && !v.null;
      if (en.scalar) en.text = std::string(v.text);
      skip(v);
    }
    BookDefaults d = defaults;
    if (entries[0].given)
      d.rate = defaults_number("rate", entries[0].text, entries[0].scalar, entries[0].line);
    if (entries[1].given)
      d.horizon = defaults_number("horizon", entries[1].text, entries[1].scalar, entries[1].line);
    if (entries[2].given)
      d.drift = defaults_number("drift", entries[2].text, entries[2].scalar, entries[2].line);
    if (entries[4].given) d.lgd = defaults_number("lgd", entries[4].text, entries[4].scalar, entries[4].line);
    if (entries[3].given) {
      const double w =
          defaults_number("default_point_weight", entries[3].text, entries[3].scalar, entries[3].line);
      if (w < 0.0 || w > 1.0) fail(entries[3].line, "key 'default_point_weight': must lie in [0, 1]");
      d.default_point_weight = w;
    }
    defaults = d;
    if (handed_out) defaults_after = true;
  }

  // Reads one obligor whose first event is `first`, as parse_yaml_book always has.
  void read_obligor(const Event& first, ObligorRecord& rec) {
    rec.clear();
    rec.line = first.line;
    if (first.kind != Kind::map_start) {
      skip(first);
      rec.read_error = "obligor entry is not a map of field: value";
      return;
    }
    // One pass, linear in the number of keys: the keys seen, the unknown ones listed (the first
    // few by name, the rest counted).
    std::bitset<kNumFieldCount + kTextFieldCount> seen_fields;
    unknown_seen.clear();
    std::string first_problem;  // the first problem other than an unknown key
    std::vector<std::string> unknown;
    std::size_t unknown_count = 0;
    bool problem_first = false;   // first_problem comes before the first unknown key
    std::string last_number_key;  // the number key just before, with its text (for a split at a comma)
    std::string last_number_text;
    while (true) {
      const Event k = pull(Expand::scalars);
      if (k.kind == Kind::map_end) break;
      key.clear();
      if (k.kind == Kind::scalar && !k.null) {
        key.assign(k.text);
      } else {
        skip(k);
      }
      const Event v = pull(Expand::scalars);
      const bool scalar = v.kind == Kind::scalar && !v.null;
      const bool null_value = v.kind == Kind::scalar && v.null;
      if (scalar) value.assign(v.text);
      skip(v);
      if (!last_number_key.empty() && all_digits(key) && null_value) {
        last_number_text += "," + key;
        if (first_problem.empty() || first_problem.rfind("field '" + last_number_key + "': a comma", 0) == 0)
          first_problem = comma_problem(last_number_key, last_number_text);
        continue;
      }
      last_number_key.clear();
      std::optional<NumField> num;
      std::optional<TextField> txt;
      const bool known = field_from_string(key, num, txt);
      const bool repeated = known ? seen_fields.test(num ? static_cast<std::size_t>(*num)
                                                         : kNumFieldCount + static_cast<std::size_t>(*txt))
                                  : !unknown_seen.insert(key).second;
      if (repeated) {
        if (first_problem.empty()) first_problem = "field '" + key + "' is given twice";
        continue;
      }
      if (!known) {
        if (unknown_count == 0) problem_first = !first_problem.empty();
        if (unknown_count++ < kListedUnknownKeys) unknown.push_back(key);
        continue;
      }
      seen_fields.set(num ? static_cast<std::size_t>(*num) : kNumFieldCount + static_cast<std::size_t>(*txt));
      if (!scalar) {
        if (first_problem.empty()) first_problem = "field '" + key + "': expected a single value";
        continue;
      }
      if (txt) {
        std::string& out = rec.get(*txt);
        out = value;
        const bool marked = out.find(kNotUtf8Mark) != std::string::npos;
        if (marked) {
          for (std::size_t at = 0; (at = out.find(kNotUtf8Mark, at)) != std::string::npos;) {
            out.replace(at, kNotUtf8Mark.size(), kReplacementChar);
            at += kReplacementChar.size();
          }
        }
        if ((marked || !valid_utf8(out)) && first_problem.empty()) {
          first_problem = "field '" + key + "': not valid UTF-8 (save the file as UTF-8)";
        }
        continue;
      }
      if (value.empty() || value == "~" || value == "null") continue;  // left empty: absent
      double x = 0.0;
      if (parse_number(value, x)) {
        rec.set(*num, x);
        last_number_key = key;
        last_number_text = value;
      } else if (first_problem.empty()) {
        first_problem = value.find(',') != std::string::npos
                            ? comma_problem(key, value)
                            : "field '" + key + "': expected a finite decimal number such as 0.35, got '" +
                                  value.substr(0, 40) + "'";
      }
    }
    if (unknown_count == 0 || problem_first) {
      rec.read_error = std::move(first_problem);
      return;
    }
    std::string& e = rec.read_error;
    e = unknown_count == 1 ? "unknown field " : "unknown fields ";
    for (std::size_t i = 0; i < unknown.size(); ++i) {
      if (i > 0) e += ", ";
      e += '\'';
      e.append(unknown[i], 0, 40);
      e += '\'';
    }
    if (unknown_count > unknown.size())
      e += " and " + std::to_string(unknown_count - unknown.size()) + " more";
    if (unknown_count == 1) {
      const std::string hint = detail::closest_name(unknown[0], obligor_field_names());
      if (!hint.empty()) e += " (did you mean '" + hint + "'?)";
    }
  }

  bool next(ObligorRecord& rec) {
    while (state == State::obligors) {
      const Event e = pull(Expand::maps);
      if (e.kind == Kind::seq_end) {
        if (part == YamlBookPart::obligor_items) {
          finish_document();
        } else {
          read_top_keys();
        }
        continue;
      }
      read_obligor(e, rec);
      handed_out = true;
      return true;
    }
    return false;
  }
};

YamlBookReader::YamlBookReader(std::string_view text, const std::string& origin, YamlBookPart part,
                               std::size_t first_line)
    : impl_(std::make_unique<Impl>()) {
  impl_->origin = origin;
  impl_->part = part;
  impl_->line_offset = first_line - 1;
  impl_->text = text;
  impl_->init();
  impl_->start();
}

YamlBookReader::YamlBookReader(std::FILE* in, const std::string& origin) : impl_(std::make_unique<Impl>()) {
  impl_->origin = origin;
  impl_->file = in;
  impl_->init();
  impl_->start();
}

YamlBookReader::~YamlBookReader() = default;

bool YamlBookReader::next(ObligorRecord& rec) {
  return impl_->next(rec);
}
const std::string& YamlBookReader::label() const noexcept {
  return impl_->label;
}
const std::string& YamlBookReader::as_of() const noexcept {
  return impl_->as_of;
}
const BookDefaults& YamlBookReader::defaults() const noexcept {
  return impl_->defaults;
}
bool YamlBookReader::defaults_after_obligors() const noexcept {
  return impl_->defaults_after;
}

}  // namespace firmcall
