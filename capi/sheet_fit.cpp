#include "sheet_fit.hpp"

#include <cmath>
#include <cstring>
#include <list>
#include <mutex>
#include <string>

#include "boundary.hpp"
#include "options.hpp"

using ellipsa::capi::Misuse;

// The cache: least recently used first out, bounded by entries and by bytes of
// copied data. Lookups compare the request and the data bit for bit (a hash
// only picks the candidates), so two ranges that merely hash alike never share
// a fit. The fit itself runs outside the lock: two threads asking for the same
// new fit may both compute it; the second insert is dropped.
struct ellipsa_sheet_cache {
  struct Entry {
    uint64_t hash;
    ellipsa::capi::sheet::FitRequest request;
    Eigen::MatrixXd data;
    ellipsa::capi::sheet::ModelPtr model;
    int64_t bytes() const { return static_cast<int64_t>(data.size() * sizeof(double)); }
  };
  std::mutex mutex;
  std::list<Entry> entries;  // most recently used at the front
  int64_t max_entries = 0, max_bytes = 0, bytes = 0, hits = 0, misses = 0;
};

namespace ellipsa::capi::sheet {
namespace {

[[noreturn]] void bad(const char* argument, const std::string& what) {
  throw Misuse{ELLIPSA_ERR_ARGUMENT, std::string(argument) + ": " + what};
}

// FNV-1a over the bytes of the data and the request fields.
uint64_t hash_of(const Eigen::MatrixXd& data, const FitRequest& r) {
  uint64_t h = 1469598103934665603ull;
  const auto mix = [&h](const void* p, size_t n) {
    const auto* b = static_cast<const unsigned char*>(p);
    for (size_t i = 0; i < n; ++i) h = (h ^ b[i]) * 1099511628211ull;
  };
  const int64_t shape[2] = {data.rows(), data.cols()};
  mix(shape, sizeof shape);
  mix(data.data(), static_cast<size_t>(data.size()) * sizeof(double));
  mix(&r.method, sizeof r.method);
  mix(&r.k_min, sizeof r.k_min);
  mix(&r.k_max, sizeof r.k_max);
  mix(&r.structure, sizeof r.structure);
  return h;
}

bool same_data(const Eigen::MatrixXd& a, const Eigen::MatrixXd& b) {
  return a.rows() == b.rows() && a.cols() == b.cols() &&
         std::memcmp(a.data(), b.data(), static_cast<size_t>(a.size()) * sizeof(double)) == 0;
}

ModelPtr fit_now(const SheetRange& data, const FitRequest& r, const char* what) {
  ellipsa_fit_options* raw = nullptr;
  check(ellipsa_fit_options_create(&raw, r.method), what);
  std::unique_ptr<ellipsa_fit_options, void (*)(ellipsa_fit_options*)> options(raw, ellipsa_fit_options_destroy);
  if (r.alpha) check(ellipsa_fit_options_set_alpha(raw, *r.alpha), "alpha");
  if (r.seed) check(ellipsa_fit_options_set_seed(raw, *r.seed), "seed");
  if (r.method == ELLIPSA_METHOD_MIXTURE) {
    check(ellipsa_fit_options_set_components(raw, r.k_min, r.k_max), "components");
    check(ellipsa_fit_options_set_structure(raw, r.structure), "structure");
  }
  const ellipsa_matrix view = data.view();
  ellipsa_model* model = nullptr;
  check(ellipsa_model_fit(&model, &view, raw), what);
  return ModelPtr(model, ellipsa_model_destroy);
}

}  // namespace

void check(ellipsa_status s, const char* what) {
  if (s != ELLIPSA_OK) throw Misuse{s, std::string(what) + ": " + ellipsa_last_error()};
}

FitRequest gaussian_request(const Arguments& a, ellipsa_method default_method,
                            std::initializer_list<ellipsa_method> allowed) {
  FitRequest r;
  r.method = default_method;
  if (const auto name = a.text("method")) {
    if (ellipsa_method_from_name(&r.method, name->c_str()) != ELLIPSA_OK)
      bad("method", "unknown method '" + *name + "'");
  }
  bool ok = false;
  std::string names;
  for (const ellipsa_method m : allowed) {
    ok = ok || m == r.method;
    names += std::string(names.empty() ? "" : ", ") + ellipsa_method_name(m);
  }
  if (!ok)
    bad("method", std::string("'") + ellipsa_method_name(r.method) + "' is not offered here (use " + names + ")");
  r.alpha = a.number("alpha");
  if (const auto seed = a.whole_number("seed", 0, int64_t{1} << 53)) r.seed = static_cast<uint64_t>(*seed);
  return r;
}

FitRequest mixture_request(const Arguments& a, int32_t default_structure) {
  FitRequest r;
  r.method = ELLIPSA_METHOD_MIXTURE;
  r.k_min = 1;
  r.k_max = 4;
  if (const auto k = a.text("components")) {
    // "K" or "K1-K2", whole numbers from 1 to 100.
    int lo = 0, hi = 0, used = 0;
    if (std::sscanf(k->c_str(), " %d - %d %n", &lo, &hi, &used) == 2 && static_cast<size_t>(used) == k->size()) {
    } else if (std::sscanf(k->c_str(), " %d %n", &lo, &used) == 1 && static_cast<size_t>(used) == k->size()) {
      hi = lo;
    } else {
      bad("components", "expected a number of regimes such as 3, or a range such as 1-4; got '" + *k + "'");
    }
    if (lo < 1 || hi < lo || hi > 100) bad("components", "expected 1 <= first <= last <= 100; got '" + *k + "'");
    r.k_min = lo;
    r.k_max = hi;
  }
  r.structure = default_structure;
  if (const auto s = a.text("structure")) {
    r.structure = structure_from_name(*s, true);
    const bool found = r.structure != 0;
    if (!found) bad("structure", "unknown structure '" + *s + "' (full, diagonal, tied, spherical or all)");
  }
  if (const auto seed = a.whole_number("seed", 0, int64_t{1} << 53)) r.seed = static_cast<uint64_t>(*seed);
  return r;
}

ModelPtr fitted(ellipsa_sheet_cache* cache, const SheetRange& data, const FitRequest& request, const char* what) {
  if (cache == nullptr) return fit_now(data, request, what);
  const uint64_t h = hash_of(data.values, request);
  {
    std::lock_guard<std::mutex> lock(cache->mutex);
    for (auto it = cache->entries.begin(); it != cache->entries.end(); ++it)
      if (it->hash == h && it->request == request && same_data(it->data, data.values)) {
        cache->entries.splice(cache->entries.begin(), cache->entries, it);
        ++cache->hits;
        return it->model;
      }
    ++cache->misses;
  }
  ModelPtr model = fit_now(data, request, what);
  const int64_t bytes = static_cast<int64_t>(data.values.size() * sizeof(double));
  if (bytes > cache->max_bytes) return model;                        // larger than the whole cache: not kept
  ellipsa_sheet_cache::Entry entry{h, request, data.values, model};  // copy outside the lock
  std::lock_guard<std::mutex> lock(cache->mutex);
  for (const auto& e : cache->entries)
    if (e.hash == h && e.request == request && same_data(e.data, data.values)) return model;
  cache->entries.push_front(std::move(entry));
  cache->bytes += bytes;
  while (static_cast<int64_t>(cache->entries.size()) > cache->max_entries || cache->bytes > cache->max_bytes) {
    cache->bytes -= cache->entries.back().bytes();
    cache->entries.pop_back();
  }
  return model;
}

}  // namespace ellipsa::capi::sheet

using ellipsa::capi::guard;
using ellipsa::capi::require_not_null;

extern "C" {

ELLIPSA_API ellipsa_status ellipsa_sheet_cache_create(ellipsa_sheet_cache** out, int64_t max_entries,
                                                      int64_t max_bytes) {
  return guard("ellipsa_sheet_cache_create", [&] {
    require_not_null(out, "out");
    if (max_entries < 1 || max_entries > 100000)
      throw Misuse{ELLIPSA_ERR_ARGUMENT, "max_entries must be in [1, 100000]"};
    if (max_bytes < 0) throw Misuse{ELLIPSA_ERR_ARGUMENT, "max_bytes must be >= 0"};
    auto* c = new ellipsa_sheet_cache;
    c->max_entries = max_entries;
    c->max_bytes = max_bytes;
    *out = c;
    return ELLIPSA_OK;
  });
}

ELLIPSA_API void ellipsa_sheet_cache_destroy(ellipsa_sheet_cache* cache) { delete cache; }

ELLIPSA_API ellipsa_status ellipsa_sheet_cache_stats(int64_t* hits, int64_t* misses, int64_t* entries, int64_t* bytes,
                                                     const ellipsa_sheet_cache* cache) {
  return guard("ellipsa_sheet_cache_stats", [&] {
    require_not_null(cache, "cache");
    auto* c = const_cast<ellipsa_sheet_cache*>(cache);  // the mutex, not the contents
    std::lock_guard<std::mutex> lock(c->mutex);
    if (hits) *hits = c->hits;
    if (misses) *misses = c->misses;
    if (entries) *entries = static_cast<int64_t>(c->entries.size());
    if (bytes) *bytes = c->bytes;
    return ELLIPSA_OK;
  });
}

}  // extern "C"
