// Who may do what on the monitor. Reads are open when the server listens on a
// loopback address; anything that changes the rig (arm, start, stop, abort,
// confirm hand-over) needs `Authorization: Bearer TOKEN`; on any other address
// every data request needs it. The token is compared in constant time so its
// bytes cannot be guessed one by one from response times.
//
// Token file policy (our choice): when the config names a token file that does
// not exist, the daemon creates it with a fresh random token, owner-only
// (0600), and logs where it is; an empty token_file means "no token": then
// every mutation is refused and a non-loopback address is refused at start.
//
// Error policy: loading is start-up and throws std::runtime_error naming the
// file; checking a request returns an optional refusal, never throws.
#pragma once

#include <filesystem>
#include <optional>
#include <string>
#include <string_view>

namespace tensile::monitor {

struct Refusal {
    int status;           // 401
    std::string message;  // names what was missing or wrong
};

class Access {
public:
    // `listen`: the address the server binds to. Throws std::runtime_error.
    Access(const std::string& listen, const std::filesystem::path& token_file);
    // A token given directly (empty: none), for tests. A named factory, not a
    // constructor: Access("0.0.0.0", {}) must never pick it (const char* → bool).
    static Access with_token(bool loopback, std::string token) {
        Access a;
        a.loopback_ = loopback;
        a.token_ = std::move(token);
        return a;
    }

    // `authorization`: the request's Authorization header (may be empty).
    [[nodiscard]] std::optional<Refusal> check(std::string_view authorization, bool mutation) const;
    // For the WebSocket upgrade from a browser, which cannot set headers: the
    // token may come as the `token` query parameter instead.
    [[nodiscard]] std::optional<Refusal> check_token(std::string_view token, bool mutation) const;

    [[nodiscard]] bool loopback() const { return loopback_; }
    [[nodiscard]] bool has_token() const { return !token_.empty(); }
    [[nodiscard]] const std::filesystem::path& token_file() const { return file_; }

private:
    Access() = default;
    bool loopback_ = true;
    std::string token_;
    std::filesystem::path file_;
};

// True for 127.0.0.0/8 and ::1 (and "localhost").
bool is_loopback_address(const std::string& address);
// Compares in time that depends only on the lengths, not on where they differ.
bool equal_constant_time(std::string_view a, std::string_view b);
// Reads the token (first line, trimmed) or creates the file with a new one.
std::string load_or_create_token(const std::filesystem::path& file, bool& created);

}  // namespace tensile::monitor
