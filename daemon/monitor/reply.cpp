// Target splitting for the API; see reply.hpp.
#include "reply.hpp"

namespace tensile::monitor {

namespace {
int hex_value(char c) {
    if (c >= '0' && c <= '9') return c - '0';
    if (c >= 'a' && c <= 'f') return c - 'a' + 10;
    if (c >= 'A' && c <= 'F') return c - 'A' + 10;
    return -1;
}

std::string decode(const std::string& s) {
    std::string out;
    for (std::size_t i = 0; i < s.size(); ++i) {
        if (s[i] == '+') {
            out += ' ';
        } else if (s[i] == '%' && i + 2 < s.size() && hex_value(s[i + 1]) >= 0 &&
                   hex_value(s[i + 2]) >= 0) {
            out += static_cast<char>(hex_value(s[i + 1]) * 16 + hex_value(s[i + 2]));
            i += 2;
        } else {
            out += s[i];
        }
    }
    return out;
}
}  // namespace

void split_target(const std::string& target, std::string& path, std::map<std::string, std::string>& query) {
    const auto q = target.find('?');
    path = decode(target.substr(0, q));
    if (q == std::string::npos) return;
    std::size_t at = q + 1;
    while (at <= target.size()) {
        auto end = target.find('&', at);
        if (end == std::string::npos) end = target.size();
        const auto pair = target.substr(at, end - at);
        if (!pair.empty()) {
            const auto eq = pair.find('=');
            query[decode(pair.substr(0, eq))] = eq == std::string::npos ? "" : decode(pair.substr(eq + 1));
        }
        at = end + 1;
    }
}

Result<nlohmann::json> parse_command_body(const std::string& body) {
    using nlohmann::json;
    if (body.find_first_not_of(" \t\r\n") == std::string::npos) return json::object();
    try {
        auto j = json::parse(body);
        if (!j.is_object()) return Error{"malformed JSON: expected an object {...}"};
        return j;
    } catch (const json::exception& e) {
        // Not only parse_error: a number too large for a double (1e999) is
        // out_of_range, which escaped here and ended the daemon (found by
        // drivers/fuzz/fuzz_monitor_request).
        return Error{std::string("malformed JSON: ") + e.what()};
    }
}

}  // namespace tensile::monitor
