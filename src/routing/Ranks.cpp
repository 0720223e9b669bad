#include "reachwise/routing/Ranks.hpp"

#include "reachwise/Error.hpp"

namespace reachwise::routing {

Ranks::Failure failureOf(const std::exception_ptr& error, int rank) {
  Ranks::Failure f;
  f.rank = rank;
  try {
    std::rethrow_exception(error);
  } catch (const InternalError& e) {
    f.internal = true, f.message = e.what();
  } catch (const Error& e) {
    f.message = e.what();
  } catch (const std::exception& e) {
    f.internal = true, f.message = e.what();
  } catch (...) {
    f.internal = true, f.message = "an unknown exception";
  }
  return f;
}

void throwFailure(const Ranks::Failure& f) {
  if (f.internal) throw InternalError(f.message);
  throw Error(f.message);
}

void onEveryRank(Ranks* ranks, const std::function<void()>& step) {
  if (!ranks || ranks->size() <= 1) {
    step();
    return;
  }
  std::exception_ptr error;
  std::optional<Ranks::Failure> mine;
  try {
    step();
  } catch (...) {
    error = std::current_exception();
    mine = failureOf(error, ranks->rank());
  }
  const std::optional<Ranks::Failure> first = ranks->firstFailure(mine);
  if (error) std::rethrow_exception(error);
  if (first) throwFailure(*first);
}

}  // namespace reachwise::routing
