// The thread count a call uses: an explicit request, else ELLIPSA_THREADS from
// the environment, else the cores this process may run on.
#pragma once
#include <cstdint>

namespace ellipsa::capi {
// requested > 0: itself (clamped to core::kMaxThreads); 0: the default above.
// Throws Misuse(ELLIPSA_ERR_ARGUMENT) for requested < 0 and for an
// ELLIPSA_THREADS that is not a whole number in [1, 256].
int resolve_threads(int32_t requested);
}  // namespace ellipsa::capi
