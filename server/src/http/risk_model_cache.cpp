#include "risk_model_cache.h"

namespace factorwatch::server {

std::shared_ptr<const pipeline::WindowRiskModel> RiskModelCache::find(const std::string& key) {
  std::lock_guard<std::mutex> lock(mutex_);
  for (auto it = order_.begin(); it != order_.end(); ++it)
    if (it->first == key) {
      order_.splice(order_.begin(), order_, it);
      return order_.front().second;
    }
  return nullptr;
}

void RiskModelCache::put(const std::string& key, std::shared_ptr<const pipeline::WindowRiskModel> model) {
  if (capacity_ == 0) return;
  std::lock_guard<std::mutex> lock(mutex_);
  for (auto it = order_.begin(); it != order_.end(); ++it)
    if (it->first == key) {
      order_.erase(it);
      break;
    }
  order_.emplace_front(key, std::move(model));
  while (order_.size() > capacity_) order_.pop_back();
}

}  // namespace factorwatch::server
