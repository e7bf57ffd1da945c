// qualify command: exit codes, argument parsing and error reporting shared by every subcommand.
// SPDX-License-Identifier: MIT
#pragma once

#include <fmt/core.h>

#include <cerrno>
#include <cstdio>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <map>
#include <optional>
#include <qualify/json.hpp>
#include <qualify/report.hpp>
#include <string>
#include <string_view>
#include <system_error>
#include <utility>
#include <vector>

namespace qualify_cli {

/// Exit statuses. 64, 65, 66, 70 and 74 are the BSD sysexits.h values EX_USAGE, EX_DATAERR,
/// EX_NOINPUT, EX_SOFTWARE and EX_IOERR, so that shell scripts can tell them apart.
namespace exit_code {
inline constexpr int holds = 0;
inline constexpr int fails = 1;
inline constexpr int undecided = 2;
inline constexpr int usage = 64;     ///< unknown option or command, missing or bad argument
inline constexpr int data = 65;      ///< malformed file content, or input the check refuses
inline constexpr int no_input = 66;  ///< a file cannot be opened or read
inline constexpr int internal = 70;  ///< a bug or out of memory: an exception reached main
inline constexpr int output = 74;    ///< standard output could not be written
}  // namespace exit_code

/// The exit status of a check's verdict; `invalid_input` is data the check refused.
inline int exit_for(qualify::verdict v) {
  switch (v) {
    case qualify::verdict::holds:
      return exit_code::holds;
    case qualify::verdict::fails:
      return exit_code::fails;
    case qualify::verdict::undecided:
      return exit_code::undecided;
    case qualify::verdict::invalid_input:
      return exit_code::data;
    case qualify::verdict::not_checked:
      break;
  }
  return exit_code::internal;
}

/// Why a command stops early: the exit status and a message that names the file and, for
/// data errors, the line. `file` and `line` repeat them for the JSON error object.
struct problem {
  int code = exit_code::internal;
  std::string message;
  std::optional<std::string> file;
  std::optional<std::size_t> line;
};

/// A value or the problem that kept it from being produced.
template <class T>
class result {
 public:
  result(T value) : value_(std::move(value)) {}
  result(problem p) : problem_(std::move(p)) {}
  explicit operator bool() const noexcept { return value_.has_value(); }
  T& operator*() { return *value_; }
  const T& operator*() const { return *value_; }
  T* operator->() { return &*value_; }
  const T* operator->() const { return &*value_; }
  const problem& error() const noexcept { return problem_; }

 private:
  std::optional<T> value_;
  problem problem_;
};

/// A file name as messages show it: quoted, and '-' as standard input.
inline std::string shown_name(std::string_view path) {
  return path == "-" ? std::string("<stdin>") : "'" + std::string(path) + "'";
}

/// Opens `path` for reading, in binary mode; '-' is standard input (`file` stays closed). The
/// stream to read, or the problem (exit 66) naming the file and the reason.
inline result<std::istream*> open_input(const std::string& path, std::ifstream& file) {
  if (path == "-") return &std::cin;
  const std::string shown = shown_name(path);
  std::error_code ec;
  if (std::filesystem::is_directory(path, ec))
    return problem{exit_code::no_input, fmt::format("cannot open {}: it is a directory", shown),
                   path, std::nullopt};
  file.open(path, std::ios::binary);
  if (!file)
    return problem{exit_code::no_input,
                   fmt::format("cannot open {}: {}", shown, std::strerror(errno)), path,
                   std::nullopt};
  return &file;
}

/// Length of the valid UTF-8 sequence that starts at s[i], 0 when the bytes there are not
/// valid UTF-8 (RFC 3629, sec. 4: no overlong forms, no surrogates, nothing above U+10FFFF).
inline std::size_t utf8_sequence_length(std::string_view s, std::size_t i) {
  const auto byte = [&](std::size_t k) { return static_cast<unsigned char>(s[k]); };
  const unsigned char c = byte(i);
  if (c < 0x80) return 1;
  std::size_t n = 0;
  unsigned char low = 0x80, high = 0xBF;  // range of the second byte
  if (c >= 0xC2 && c <= 0xDF)
    n = 2;
  else if (c == 0xE0)
    n = 3, low = 0xA0;
  else if ((c >= 0xE1 && c <= 0xEC) || c == 0xEE || c == 0xEF)
    n = 3;
  else if (c == 0xED)
    n = 3, high = 0x9F;
  else if (c == 0xF0)
    n = 4, low = 0x90;
  else if (c >= 0xF1 && c <= 0xF3)
    n = 4;
  else if (c == 0xF4)
    n = 4, high = 0x8F;
  else
    return 0;
  if (i + n > s.size()) return 0;
  if (byte(i + 1) < low || byte(i + 1) > high) return 0;
  for (std::size_t k = 2; k < n; ++k)
    if (byte(i + k) < 0x80 || byte(i + k) > 0xBF) return 0;
  return n;
}

/// The text with every byte that is not valid UTF-8 replaced by '?': JSON must be UTF-8, and
/// file names and quoted file content can hold anything.
inline std::string valid_utf8(std::string_view s) {
  std::string out;
  out.reserve(s.size());
  for (std::size_t i = 0; i < s.size();) {
    const std::size_t n = utf8_sequence_length(s, i);
    if (n == 0) {
      out += '?';
      ++i;
    } else {
      out.append(s.substr(i, n));
      i += n;
    }
  }
  return out;
}

/// One option of a command. Options may come before or after the operands, as `--name VALUE`
/// or `--name=VALUE`; `--` ends the options.
struct option_spec {
  std::string_view name;        ///< "--tol"
  std::string_view value_name;  ///< "X"; empty for a flag
  std::string_view help;        ///< lines after the first are indented under it
  bool required = false;        ///< a missing required option is a usage error
};

/// What a command accepts, and the text of its --help. Every command also takes --json and
/// -h/--help (added by the parser, listed by the usage text).
struct command_spec {
  std::string_view name;                   ///< "licq"
  std::string_view summary;                ///< one line, for `qualify --help`
  std::vector<std::string_view> operands;  ///< required, in order: {"FILE.mtx"}
  std::vector<option_spec> options;
  std::string_view description;  ///< paragraphs between the usage line and the options
  std::string_view epilogue;     ///< paragraphs after the options
};

inline const std::vector<option_spec>& common_options() {
  static const std::vector<option_spec> options{
      {"--json", "", "print one JSON object on stdout, also on errors (see below)"},
      {"--help", "", "print this help and exit (also -h)"}};
  return options;
}

/// The exit statuses as the usage texts list them.
inline constexpr std::string_view exit_status_text =
    "Exit status: 0 holds, 1 fails, 2 undecided, 64 usage error, 65 malformed data or\n"
    "input the check refuses, 66 a file cannot be opened or read, 70 internal error,\n"
    "74 standard output cannot be written.\n";

inline constexpr std::string_view json_error_text =
    "Messages go to stderr. With --json, every error (exit 64, 65, 66, 70) also prints\n"
    "one JSON object on stdout, so that a pipeline always reads JSON:\n"
    "  {\"schema_version\":1,\"check\":NAME,\"verdict\":\"invalid_input\",\"error\":MESSAGE,\n"
    "   \"exit_code\":CODE[,\"file\":PATH][,\"line\":N]}\n";

inline std::string usage_text(const command_spec& spec) {
  std::string text = fmt::format("Usage: qualify {}", spec.name);
  for (auto operand : spec.operands) text += fmt::format(" {}", operand);
  for (const auto& o : spec.options)
    text += o.value_name.empty() ? fmt::format(" [{}]", o.name)
            : o.required         ? fmt::format(" {} {}", o.name, o.value_name)
                                 : fmt::format(" [{} {}]", o.name, o.value_name);
  text += " [--json]\n\n";
  text += spec.description;
  text += "\nOptions:\n";
  const auto add = [&](const option_spec& o) {
    const std::string head =
        o.value_name.empty() ? std::string(o.name) : fmt::format("{} {}", o.name, o.value_name);
    std::string_view help = o.help;
    bool first = true;
    while (!help.empty() || first) {
      const auto cut = help.find('\n');
      text += fmt::format("  {:<15} {}\n", first ? head : "", help.substr(0, cut));
      help = cut == std::string_view::npos ? std::string_view() : help.substr(cut + 1);
      first = false;
    }
  };
  for (const auto& o : spec.options) add(o);
  for (const auto& o : common_options()) add(o);
  if (!spec.epilogue.empty()) text += "\n" + std::string(spec.epilogue);
  text += "\n" + std::string(json_error_text) + "\n" + std::string(exit_status_text);
  return text;
}

/// True when `--json` is among the options (before any `--`): then errors print JSON too,
/// even those found before the arguments are understood.
inline bool wants_json(const std::vector<std::string>& args) {
  for (const auto& a : args) {
    if (a == "--") return false;
    if (a == "--json") return true;
  }
  return false;
}

/// Prints a problem: "qualify NAME: message" on stderr (with a pointer to --help for usage
/// errors) and, with --json, the JSON error object on stdout. Returns its exit status.
inline int report_problem(const problem& p, std::string_view command, bool json) {
  const std::string prefix = command.empty() ? "qualify" : fmt::format("qualify {}", command);
  std::string text = fmt::format("{}: {}\n", prefix, p.message);
  if (p.code == exit_code::usage) text += fmt::format("Try '{} --help'.\n", prefix);
  std::fputs(text.c_str(), stderr);
  if (json) {
    qualify::detail::json_writer w;
    w.begin_object().field("schema_version", qualify::json_schema_version);
    if (!command.empty()) w.field("check", command);
    w.field("verdict", to_string(qualify::verdict::invalid_input))
        .field("error", valid_utf8(p.message))
        .field("exit_code", p.code);
    if (p.file) w.field("file", valid_utf8(*p.file));
    if (p.line) w.field("line", static_cast<qualify::Index>(*p.line));
    w.end_object();
    fmt::print("{}\n", w.str());
  }
  return p.code;
}

/// A parsed command line, handed to the command's function.
class invocation {
 public:
  explicit invocation(const command_spec& spec) : spec_(&spec) {}

  const command_spec& spec() const noexcept { return *spec_; }
  bool json() const noexcept { return flag("--json"); }
  bool help() const noexcept { return help_; }
  const std::vector<std::string>& operands() const noexcept { return operands_; }
  bool flag(std::string_view name) const { return options_.find(name) != options_.end(); }
  std::optional<std::string> value(std::string_view name) const {
    const auto it = options_.find(name);
    if (it == options_.end()) return std::nullopt;
    return it->second;
  }

  /// Reports `p` (see report_problem) and returns its exit status: `return in.fail(...)`.
  int fail(const problem& p) const { return report_problem(p, spec_->name, json()); }
  int usage_error(std::string message) const {
    return fail({exit_code::usage, std::move(message), std::nullopt, std::nullopt});
  }

  /// Parses the arguments after the command name. -h/--help anywhere wins over other
  /// mistakes; otherwise an unknown option, a missing value or operand, a repeated option or
  /// an extra operand is a usage problem.
  static result<invocation> parse(const command_spec& spec, const std::vector<std::string>& args) {
    invocation in(spec);
    const auto usage = [](std::string message) {
      return problem{exit_code::usage, std::move(message), std::nullopt, std::nullopt};
    };
    for (const auto& a : args) {
      if (a == "--") break;
      if (a == "-h" || a == "--help") {
        in.help_ = true;
        return in;
      }
    }
    bool options_ended = false;
    for (std::size_t i = 0; i < args.size(); ++i) {
      const std::string& a = args[i];
      if (options_ended || a.size() < 2 || a[0] != '-') {  // "-" is standard input
        in.operands_.push_back(a);
        continue;
      }
      if (a == "--") {
        options_ended = true;
        continue;
      }
      std::string name = a;
      std::optional<std::string> inline_value;
      if (const auto eq = a.find('='); a.rfind("--", 0) == 0 && eq != std::string::npos) {
        name = a.substr(0, eq);
        inline_value = a.substr(eq + 1);
      }
      const option_spec* option = find_option(spec, name);
      if (!option) return usage(fmt::format("unknown option {}", quote(name)));
      std::string value;
      if (option->value_name.empty()) {
        if (inline_value) return usage(fmt::format("option {} takes no value", option->name));
      } else if (inline_value) {
        value = *inline_value;
      } else if (i + 1 < args.size()) {
        value = args[++i];
      } else {
        return usage(fmt::format("option {} needs a value {}", option->name, option->value_name));
      }
      if (!in.options_.emplace(std::string(option->name), std::move(value)).second)
        return usage(fmt::format("option {} is given twice", option->name));
    }
    for (const auto& o : spec.options)
      if (o.required && !in.flag(o.name))
        return usage(fmt::format("missing {} {}", o.name, o.value_name));
    if (in.operands_.size() < spec.operands.size())
      return usage(fmt::format("missing {} argument", spec.operands[in.operands_.size()]));
    if (in.operands_.size() > spec.operands.size())
      return usage(
          fmt::format("unexpected argument {}", quote(in.operands_[spec.operands.size()])));
    return in;
  }

  /// Text from the command line, quoted for a message, control bytes shown as '?'.
  static std::string quote(std::string_view s) {
    std::string text(s);
    for (char& c : text)
      if (static_cast<unsigned char>(c) < 0x20 || c == 0x7f) c = '?';
    return "'" + text + "'";
  }

 private:
  static const option_spec* find_option(const command_spec& spec, std::string_view name) {
    for (const auto* list : {&spec.options, &common_options()})
      for (const auto& o : *list)
        if (o.name == name) return &o;
    return nullptr;
  }

  const command_spec* spec_;
  bool help_ = false;
  std::vector<std::string> operands_;
  std::map<std::string, std::string, std::less<>> options_;
};

/// A subcommand: what it accepts and the function that runs it. The function returns the
/// exit status: exit_for(report.result), or in.fail(problem) when it stops early.
struct command {
  const command_spec* spec;
  int (*run)(const invocation& in);
};

}  // namespace qualify_cli
