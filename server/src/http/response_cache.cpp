#include "response_cache.h"

namespace factorwatch::server {

std::shared_ptr<const std::string> ResponseCache::find(const std::string& key) {
  std::lock_guard<std::mutex> lock(mutex_);
  const auto it = index_.find(key);
  if (it == index_.end()) return nullptr;
  order_.splice(order_.begin(), order_, it->second);
  return it->second->second;
}

void ResponseCache::put(const std::string& key, std::shared_ptr<const std::string> body) {
  const std::size_t size = body->size() + key.size();
  if (size > max_bytes_) return;
  std::lock_guard<std::mutex> lock(mutex_);
  if (const auto it = index_.find(key); it != index_.end()) {
    bytes_ -= it->second->second->size() + key.size();
    order_.erase(it->second);
    index_.erase(it);
  }
  order_.emplace_front(key, std::move(body));
  index_.emplace(key, order_.begin());
  bytes_ += size;
  while (bytes_ > max_bytes_) {
    const Entry& last = order_.back();
    bytes_ -= last.second->size() + last.first.size();
    index_.erase(last.first);
    order_.pop_back();
  }
}

}  // namespace factorwatch::server
