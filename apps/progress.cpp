#include "progress.hpp"

#include <fmt/core.h>
#include <unistd.h>
#include <algorithm>

#include "pulsewise/simulation.hpp"

namespace pulsewise::app {

void ObserverFanOut::on_start(const RunInfo& info) {
  for (Observer* o : observers_) o->on_start(info);
}
void ObserverFanOut::on_piece(const PieceView& piece) {
  for (Observer* o : observers_) o->on_piece(piece);
}
void ObserverFanOut::on_event(const EventRecord& event) {
  for (Observer* o : observers_) o->on_event(event);
}
void ObserverFanOut::on_cycle(const CycleMetrics& cycle) {
  for (Observer* o : observers_) o->on_cycle(cycle);
}
void ObserverFanOut::on_finish(const RunSummary& summary) {
  for (Observer* o : observers_) o->on_finish(summary);
}

bool ObserverFanOut::wants_pieces_and_events() const {
  return std::any_of(observers_.begin(), observers_.end(),
                     [](const Observer* o) { return o->wants_pieces_and_events(); });
}

bool ProgressLine::is_terminal(std::FILE* stream) { return isatty(fileno(stream)) == 1; }

void ProgressLine::on_start(const RunInfo& info) {
  total_periods_ = info.periods;
  done_ = 0;
  start_ = last_ = Clock::now();
}

void ProgressLine::on_cycle(const CycleMetrics& /*cycle*/) {
  ++done_;
  const Clock::time_point now = Clock::now();
  if (std::chrono::duration<double>(now - last_).count() < interval_s_) return;
  last_ = now;
  const double elapsed_s = std::chrono::duration<double>(now - start_).count();
  const double rate = elapsed_s > 0.0 ? static_cast<double>(done_) / elapsed_s : 0.0;
  const long left = total_periods_ > done_ ? total_periods_ - done_ : 0;
  const double eta_s = rate > 0.0 ? static_cast<double>(left) / rate : 0.0;
  // "Left" assumes the run goes to its last period; a steady-state stop ends it sooner.
  fmt::print(out_, "\r{} / {} periods  {:.0f} periods/s  {:.{}f} s left   ", done_, total_periods_,
             rate, eta_s, eta_s < 10.0 ? 1 : 0);
  std::fflush(out_);
  shown_ = true;
}

void ProgressLine::on_finish(const RunSummary& /*summary*/) {
  if (!shown_) return;
  // Erase the line so that the summary starts on a clean terminal line.
  fmt::print(out_, "\r{:<78}\r", "");
  std::fflush(out_);
  shown_ = false;
}

}  // namespace pulsewise::app
