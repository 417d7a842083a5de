#include "pulsewise/error.hpp"

#include <sstream>

namespace pulsewise {

const char* to_string(ErrorKind kind) {
  switch (kind) {
    case ErrorKind::kInvalidValue: return "invalid value";
    case ErrorKind::kDuplicateName: return "duplicate name";
    case ErrorKind::kUnknownNode: return "unknown node";
    case ErrorKind::kUnknownGate: return "unknown gate";
    case ErrorKind::kFloatingNode: return "floating node";
    case ErrorKind::kVoltageLoop: return "voltage loop";
    case ErrorKind::kCurrentCutset: return "current cutset";
    case ErrorKind::kTooManyDevices: return "too many devices";
    case ErrorKind::kFileSyntax: return "file syntax";
    case ErrorKind::kUnknownKey: return "unknown key";
    case ErrorKind::kMissingKey: return "missing key";
    case ErrorKind::kWrongUnit: return "wrong unit";
    case ErrorKind::kInvalidOption: return "invalid option";
    case ErrorKind::kBadFile: return "bad file";
  }
  return "unknown";
}

namespace {

std::string format_message(const std::string& element, const std::string& problem,
                           const std::string& fix, const SourceLocation& where) {
  std::ostringstream out;
  if (!where.file.empty()) {
    out << where.file;
    if (where.line > 0) out << ':' << where.line;
    if (where.column > 0) out << ':' << where.column;
    out << ": ";
  }
  if (!element.empty()) out << "element '" << element << "': ";
  out << problem;
  if (!fix.empty()) out << "; " << fix;
  return out.str();
}

}  // namespace

InputError::InputError(ErrorKind kind, std::string element, std::string problem, std::string fix,
                       SourceLocation where, std::vector<std::string> elements_involved)
    : std::runtime_error(format_message(element, problem, fix, where)),
      kind_(kind),
      element_(std::move(element)),
      problem_(std::move(problem)),
      fix_(std::move(fix)),
      where_(std::move(where)),
      elements_involved_(std::move(elements_involved)) {
  if (elements_involved_.empty() && !element_.empty()) elements_involved_.push_back(element_);
}

}  // namespace pulsewise
