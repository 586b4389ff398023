// The step registry: names of the step kinds.
#include "steps/detail.hpp"

namespace heraldry::steps {

const char* to_string(StepKind kind) {
  switch (kind) {
    case StepKind::link: return "link";
    case StepKind::tap: return "tap";
    case StepKind::add: return "add";
    case StepKind::amplify: return "amplify";
    case StepKind::scissors: return "scissors";
    case StepKind::loss: return "loss";
  }
  return "unknown";
}

}  // namespace heraldry::steps
