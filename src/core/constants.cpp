#include "polystokes/core/constants.h"

namespace polystokes {

const char* operational_caution() {
  return "CAUTION: this is a constant-density, shape-derived gravity model. Validate it against tracking "
         "data "
         "and review it under the mission's own procedures before any operational use.";
}

}  // namespace polystokes
