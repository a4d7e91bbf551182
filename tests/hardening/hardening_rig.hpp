// The rig the security tests start tensiled with: one TCP source pointed at a
// port where nothing listens (no frames, so runs are armed and aborted by
// command alone and nothing depends on timing), two profiles, and a token
// file the daemon creates itself on first start. Test-only.
#pragma once

#include <boost/asio/ip/tcp.hpp>
#include <filesystem>
#include <fstream>
#include <string>

namespace tensile::testing {

inline std::uint16_t closed_port() {
    boost::asio::io_context io;
    boost::asio::ip::tcp::acceptor a(io, {boost::asio::ip::address_v4::loopback(), 0});
    return a.local_endpoint().port();  // closed again when `a` goes away
}

// Writes dir/rig.toml; the token file dir/secret/monitor.token does not exist yet.
inline std::filesystem::path write_hardening_config(const std::filesystem::path& dir) {
    const auto file = dir / "rig.toml";
    std::ofstream(file) << "[daemon]\ndata_dir = \"" << (dir / "data").string() << "\"\n"
                        << "[monitor]\nlisten = \"127.0.0.1\"\nport = 0\ntoken_file = \""
                        << (dir / "secret" / "monitor.token").string() << "\"\n"
                        << "[rig]\nname = \"harbourline-bench-1\"\n[run]\nprofile = \"plate\"\n"
                        << "[profile.plate]\nproof_offsets_pct = [0.2]\n"
                        << "[profile.sheet]\nproof_offsets_pct = [0.2]\n"
                        << "[source.frame]\nkind = \"tcp\"\nhost = \"127.0.0.1\"\nport = " << closed_port() << "\n"
                        << "retry_min_ms = 100\nretry_max_ms = 500\nformat = \"lines\"\ntime_field = 0\n"
                        << "  [[source.frame.channel]]\n  name = \"force\"\n  unit = \"N\"\n  field = 1\n"
                        << "  [[source.frame.channel]]\n  name = \"extension\"\n  unit = \"mm\"\n  field = 2\n"
                        << "  [[source.frame.channel]]\n  name = \"crosshead\"\n  unit = \"mm\"\n  field = 3\n";
    return file;
}

inline std::string read_token(const std::filesystem::path& dir) {
    std::ifstream in(dir / "secret" / "monitor.token");
    std::string token;
    std::getline(in, token);
    return token;
}

}  // namespace tensile::testing
