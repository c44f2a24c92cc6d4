// Rendered response bodies of the read endpoints, kept by a key that names the stored
// window exactly (storage::WindowStamp), so a refit or a correction is never served
// stale. Rendering a 5,000-asset window takes milliseconds; serving it again from here
// takes a lookup. Least recently used bodies go first once the byte budget is spent.
#pragma once

#include <cstddef>
#include <list>
#include <memory>
#include <mutex>
#include <string>
#include <unordered_map>
#include <utility>

namespace factorwatch::server {

class ResponseCache {
 public:
  explicit ResponseCache(std::size_t max_bytes) : max_bytes_(max_bytes) {}

  std::shared_ptr<const std::string> find(const std::string& key);
  void put(const std::string& key, std::shared_ptr<const std::string> body);

 private:
  using Entry = std::pair<std::string, std::shared_ptr<const std::string>>;
  std::mutex mutex_;
  std::size_t max_bytes_;
  std::size_t bytes_ = 0;
  std::list<Entry> order_;  // most recently used first
  std::unordered_map<std::string, std::list<Entry>::iterator> index_;
};

}  // namespace factorwatch::server
