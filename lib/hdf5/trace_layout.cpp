#include "trace_layout.hpp"

namespace pulsewise::detail::layout {

const char* mode_name(ConductionMode mode) {
  switch (mode) {
    case ConductionMode::kNone: return "none";
    case ConductionMode::kCcm: return "ccm";
    case ConductionMode::kDcm: return "dcm";
    case ConductionMode::kBoundary: return "boundary";
  }
  return "none";
}

const char* event_kind_name(EventKind kind) {
  switch (kind) {
    case EventKind::kGateEdge: return "gate_edge";
    case EventKind::kSourceBreakpoint: return "source_breakpoint";
    case EventKind::kDeviceTurnOn: return "device_turn_on";
    case EventKind::kDeviceTurnOff: return "device_turn_off";
    case EventKind::kForcedTurnOff: return "forced_turn_off";
    case EventKind::kForcedTurnOn: return "forced_turn_on";
  }
  return "gate_edge";
}

const char* run_end_name(RunEnd end) {
  switch (end) {
    case RunEnd::kCompleted: return "completed";
    case RunEnd::kSteadyState: return "steady_state";
    case RunEnd::kChattering: return "chattering";
    case RunEnd::kNoConsistentConfiguration: return "no_consistent_configuration";
    case RunEnd::kInterruptedCurrent: return "interrupted_current";
    case RunEnd::kZeroResistanceLoop: return "zero_resistance_loop";
  }
  return "completed";
}

const char* quantity_name(SignalQuantity quantity) {
  return quantity == SignalQuantity::kVoltage ? "voltage" : "current";
}

std::optional<RunEnd> run_end_from_name(const std::string& name) {
  for (RunEnd end : {RunEnd::kCompleted, RunEnd::kSteadyState, RunEnd::kChattering,
                     RunEnd::kNoConsistentConfiguration, RunEnd::kInterruptedCurrent,
                     RunEnd::kZeroResistanceLoop}) {
    if (name == run_end_name(end)) return end;
  }
  return std::nullopt;
}

namespace {

template <class Enum>
H5::EnumType make_enum(std::initializer_list<Enum> values, const char* (*name_of)(Enum)) {
  H5::EnumType type(H5::PredType::NATIVE_INT8);
  for (Enum value : values) {
    auto code = static_cast<std::int8_t>(value);
    type.insert(name_of(value), &code);
  }
  return type;
}

}  // namespace

H5::EnumType mode_type() {
  return make_enum({ConductionMode::kNone, ConductionMode::kCcm, ConductionMode::kDcm,
                    ConductionMode::kBoundary},
                   &mode_name);
}

H5::EnumType event_kind_type() {
  return make_enum({EventKind::kGateEdge, EventKind::kSourceBreakpoint, EventKind::kDeviceTurnOn,
                    EventKind::kDeviceTurnOff, EventKind::kForcedTurnOff, EventKind::kForcedTurnOn},
                   &event_kind_name);
}

H5::EnumType quantity_type() {
  return make_enum({SignalQuantity::kVoltage, SignalQuantity::kCurrent}, &quantity_name);
}

}  // namespace pulsewise::detail::layout
