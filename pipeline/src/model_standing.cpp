#include "factorwatch/pipeline/model_standing.h"

#include "factorwatch/pipeline/refresh.h"
#include "factorwatch/storage/returns_span.h"
#include "factorwatch/storage/windows.h"

namespace factorwatch::pipeline {

ModelStanding model_standing(storage::Database& db, const storage::ModelVersion& model) {
  ModelStanding s;
  const std::vector<engine::Date> dates = storage::stored_dates(db);
  if (!dates.empty()) s.latest_stored = dates.back();
  s.latest_window = storage::count_windows(db, model.id).latest_as_of;
  s.pending = pending_windows(db, model).size();
  return s;
}

}  // namespace factorwatch::pipeline
