#pragma once
// What the store's .cpp files share and its tests check: the schema it writes and reads.

#include <string>

namespace frugal::store::internal {

// Version of results_schema/results_store_v1.sql; a store of another version is refused.
int schema_version();
// The DDL that creates an empty store, byte for byte the content of results_store_v1.sql.
const std::string& schema_sql();

}  // namespace frugal::store::internal
