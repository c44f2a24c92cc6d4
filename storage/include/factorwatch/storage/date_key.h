// Dates in the database are INTEGER yyyymmdd keys (engine::Date::key, ordered as the
// dates are); a key read back becomes an engine::Date here. JSON writes a date as its
// yyyy-mm-dd text and no date (an empty optional) as null (the serializers below), so a
// record's date goes into a document as is.
#pragma once

#include <cstdint>
#include <nlohmann/json.hpp>
#include <optional>
#include <string>

#include "factorwatch/engine/date.h"

namespace factorwatch::storage {

// The date of a stored key. Throws DamagedData when the key names no day (a row edited
// by hand, a flipped bit): such a row is never served as some other date.
engine::Date stored_date(std::int64_t key);

// For messages about a stored row whose key may be the damaged part: its date as text, or
// "date key N" when it names no day.
std::string key_text(std::int64_t key);

}  // namespace factorwatch::storage

namespace nlohmann {
template <>
struct adl_serializer<factorwatch::engine::Date> {
  template <typename BasicJson>
  static void to_json(BasicJson& j, factorwatch::engine::Date d) {
    j = d.iso();
  }
};
// No date is null.
template <>
struct adl_serializer<std::optional<factorwatch::engine::Date>> {
  template <typename BasicJson>
  static void to_json(BasicJson& j, const std::optional<factorwatch::engine::Date>& d) {
    if (d) j = d->iso();
    else j = nullptr;
  }
};
}  // namespace nlohmann
