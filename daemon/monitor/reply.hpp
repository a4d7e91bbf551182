// What an API handler answers: status, content type, body and extra headers,
// independent of Beast so handlers can be tested without sockets. Errors are
// always JSON: {"error": "<message naming what was wrong>", "status": N}.
#pragma once

#include <map>
#include <string>
#include <utility>
#include <vector>

#include <nlohmann/json.hpp>

#include "engine/result.hpp"

namespace tensile::monitor {

struct Reply {
    unsigned status = 200;
    std::string content_type = "application/json";
    std::string body;
    std::vector<std::pair<std::string, std::string>> headers;
};

inline Reply json_reply(const nlohmann::json& j, unsigned status = 200) {
    // Replace invalid UTF-8 (a label typed in another code page) rather than throw.
    return Reply{status, "application/json", j.dump(-1, ' ', false, nlohmann::json::error_handler_t::replace), {}};
}

inline Reply error_reply(unsigned status, const std::string& message) {
    return json_reply(nlohmann::json{{"error", message}, {"status", status}}, status);
}

// A request as the API sees it: method, path, decoded query, headers it uses, body.
struct ApiRequest {
    std::string method;  // "GET", "POST", ...
    std::string path;    // without the query
    std::map<std::string, std::string> query;
    std::string authorization;
    std::string body;
};

// Splits "/a/b?x=1&y=%20" into path and decoded query parameters.
void split_target(const std::string& target, std::string& path, std::map<std::string, std::string>& query);

// Parses a command body: empty (or blanks) is an empty object; anything else
// must be a JSON object. Here rather than in api.cpp so it can be fuzzed
// without sockets (drivers/fuzz/fuzz_monitor_body.cpp).
Result<nlohmann::json> parse_command_body(const std::string& body);

}  // namespace tensile::monitor
