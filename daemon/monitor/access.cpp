// Access rules and the token file; see access.hpp.
#include "access.hpp"

#include <boost/asio/ip/address.hpp>
#include <fcntl.h>
#include <fstream>
#include <random>
#include <stdexcept>
#include <sys/stat.h>
#include <unistd.h>

namespace tensile::monitor {

bool is_loopback_address(const std::string& address) {
    if (address == "localhost") return true;
    boost::system::error_code ec;
    const auto a = boost::asio::ip::make_address(address, ec);
    return !ec && a.is_loopback();
}

bool equal_constant_time(std::string_view a, std::string_view b) {
    // Walk the longer length every time; a length mismatch still costs the same.
    const std::size_t n = std::max(a.size(), b.size());
    unsigned diff = a.size() == b.size() ? 0u : 1u;
    for (std::size_t i = 0; i < n; ++i) {
        const unsigned char x = i < a.size() ? static_cast<unsigned char>(a[i]) : 0;
        const unsigned char y = i < b.size() ? static_cast<unsigned char>(b[i]) : 0;
        diff |= static_cast<unsigned>(x ^ y);
    }
    return diff == 0;
}

std::string load_or_create_token(const std::filesystem::path& file, bool& created) {
    created = false;
    if (std::filesystem::exists(file)) {
        std::ifstream in(file);
        if (!in) throw std::runtime_error("cannot read the token file " + file.string());
        std::string token;
        std::getline(in, token);
        while (!token.empty() && std::isspace(static_cast<unsigned char>(token.back()))) token.pop_back();
        while (!token.empty() && std::isspace(static_cast<unsigned char>(token.front()))) token.erase(0, 1);
        if (token.size() < 16)
            throw std::runtime_error("the token file " + file.string() + " holds a token shorter than 16 characters");
        return token;
    }
    std::error_code ec;
    if (file.has_parent_path()) std::filesystem::create_directories(file.parent_path(), ec);
    // 32 random bytes as hex; std::random_device reads the kernel's generator on Linux.
    std::random_device rd;
    static constexpr char hex[] = "0123456789abcdef";
    std::string token;
    for (int i = 0; i < 32; ++i) {
        const auto byte = static_cast<unsigned>(rd()) & 0xffu;
        token += hex[byte >> 4];
        token += hex[byte & 15];
    }
    // O_EXCL: never overwrite a file someone else just made; 0600: owner only.
    const int fd = ::open(file.c_str(), O_WRONLY | O_CREAT | O_EXCL, S_IRUSR | S_IWUSR);
    if (fd < 0) throw std::runtime_error("cannot create the token file " + file.string());
    const std::string line = token + "\n";
    const bool ok = ::write(fd, line.data(), line.size()) == static_cast<ssize_t>(line.size());
    ::close(fd);
    if (!ok) throw std::runtime_error("cannot write the token file " + file.string());
    created = true;
    return token;
}

Access::Access(const std::string& listen, const std::filesystem::path& token_file)
    : loopback_(is_loopback_address(listen)), file_(token_file) {
    if (!token_file.empty()) {
        bool created = false;
        token_ = load_or_create_token(token_file, created);
    }
    if (!loopback_ && token_.empty())
        throw std::runtime_error("monitor.listen = \"" + listen +
                                 "\" is not a loopback address; set monitor.token_file so every request needs a token");
}

std::optional<Refusal> Access::check(std::string_view authorization, bool mutation) const {
    constexpr std::string_view scheme = "Bearer ";
    std::string_view given;
    if (authorization.size() > scheme.size() && authorization.substr(0, scheme.size()) == scheme)
        given = authorization.substr(scheme.size());
    else if (!authorization.empty() && (mutation || !loopback_))
        return Refusal{401, "the Authorization header must be 'Bearer TOKEN'"};
    return check_token(given, mutation);
}

std::optional<Refusal> Access::check_token(std::string_view given, bool mutation) const {
    const bool needed = mutation || !loopback_;
    if (!needed) return std::nullopt;
    if (token_.empty()) return Refusal{401, "this daemon has no token configured (monitor.token_file), so it accepts no commands"};
    if (given.empty()) return Refusal{401, "missing token: send 'Authorization: Bearer TOKEN' (the token is in the daemon's token file)"};
    if (!equal_constant_time(given, token_)) return Refusal{401, "wrong token"};
    return std::nullopt;
}

}  // namespace tensile::monitor
