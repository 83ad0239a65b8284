// Model lifetime and the derived state every model carries.
#include "model.hpp"

#include "boundary.hpp"
#include "core/error.hpp"

namespace ellipsa::capi {

void finalise(ellipsa_model& m) {
  for (size_t k = 0; k < m.components.size(); ++k) {
    auto& c = m.components[k];
    if (!c.factor.compute(c.scatter)) {
      const std::string which = m.components.size() == 1 ? std::string("the scatter matrix")
                                                         : "the scatter of component " + std::to_string(k + 1);
      throw core::Error(core::ErrorKind::Singular, which + " is not positive definite");
    }
  }
}

std::vector<std::string> column_names_or_default(const std::vector<std::string>& given, int64_t p) {
  if (!given.empty()) {
    if (static_cast<int64_t>(given.size()) != p)
      throw Misuse{ELLIPSA_ERR_SHAPE,
                   std::to_string(given.size()) + " column names given for " + std::to_string(p) + " data columns"};
    return given;
  }
  std::vector<std::string> names;
  for (int64_t j = 0; j < p; ++j) names.push_back("x" + std::to_string(j + 1));
  return names;
}

}  // namespace ellipsa::capi

extern "C" ELLIPSA_API void ellipsa_model_destroy(ellipsa_model* model) { delete model; }
