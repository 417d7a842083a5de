// Observers the driver attaches to a run besides the trace recorder: a fan-out that forwards to
// several observers, and a progress line on stderr (periods done, periods per second, time left).
#pragma once

#include <chrono>
#include <cstdio>
#include <vector>

#include "pulsewise/observer.hpp"

namespace pulsewise::app {

// Forwards every call to each observer in turn (the recorder first, then the progress line).
class ObserverFanOut : public Observer {
 public:
  void add(Observer* observer) {
    if (observer != nullptr) observers_.push_back(observer);
  }
  bool empty() const { return observers_.empty(); }
  bool wants_pieces_and_events() const override;
  void on_start(const RunInfo& info) override;
  void on_piece(const PieceView& piece) override;
  void on_event(const EventRecord& event) override;
  void on_cycle(const CycleMetrics& cycle) override;
  void on_finish(const RunSummary& summary) override;

 private:
  std::vector<Observer*> observers_;
};

// Rewrites one line on a terminal at most every interval_s seconds; erases it at the end.
class ProgressLine : public Observer {
 public:
  explicit ProgressLine(std::FILE* out = stderr, double interval_s = 0.25)
      : out_(out), interval_s_(interval_s) {}

  void on_start(const RunInfo& info) override;
  void on_cycle(const CycleMetrics& cycle) override;
  void on_finish(const RunSummary& summary) override;
  bool wants_pieces_and_events() const override { return false; }

  // True when the stream is a terminal: the driver shows progress only then.
  static bool is_terminal(std::FILE* stream);

 private:
  using Clock = std::chrono::steady_clock;
  std::FILE* out_;
  double interval_s_;
  long total_periods_ = 0;
  long done_ = 0;
  bool shown_ = false;
  Clock::time_point start_{};
  Clock::time_point last_{};
};

}  // namespace pulsewise::app
