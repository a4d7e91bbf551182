// Throughput of the delimited-lines parser on the simulator's default layout
// (time, force, extension, crosshead with unit suffixes), printed beside a
// plain memcpy and a raw TCP loopback byte pipe carrying the same bytes, so
// the ratio shows whether the parser or the wire would be the limit.
// Target (issue 4): at least 200 MB/s on one core. Not a test: numbers only.
//
//   tensile_drivers_bench [megabytes=64]
#include <arpa/inet.h>
#include <netinet/in.h>
#include <sys/socket.h>
#include <unistd.h>

#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <ctime>
#include <random>
#include <string>
#include <thread>
#include <vector>

#include "drivers/parser_registry.hpp"

using namespace tensile::drivers;
using clock_type = std::chrono::steady_clock;

namespace {

std::string make_stream(std::size_t bytes) {
    // Demo data only: a smooth ramp with a little noise, as a rig might send.
    std::string s;
    s.reserve(bytes + 64);
    std::mt19937 rng(1);
    std::uniform_real_distribution<double> noise(-0.5, 0.5);
    char line[96];
    for (std::uint64_t i = 0; s.size() < bytes; ++i) {
        const double t = static_cast<double>(i) * 1e-3;
        const int n = std::snprintf(line, sizeof line, "%llu,%.2f N,%.5f mm,%.4f mm\n",
                                    static_cast<unsigned long long>(184233100 + i * 1000), 1500.0 + 20.0 * t + noise(rng),
                                    0.0001 * t, 0.002 * t);
        s.append(line, static_cast<std::size_t>(n));
    }
    return s;
}

// CPU time of this thread: on a shared machine wall time measures the neighbours too.
double thread_cpu_s() {
    timespec ts{};
    ::clock_gettime(CLOCK_THREAD_CPUTIME_ID, &ts);
    return static_cast<double>(ts.tv_sec) + static_cast<double>(ts.tv_nsec) * 1e-9;
}

double mb_per_s(std::size_t bytes, clock_type::duration d) {
    return static_cast<double>(bytes) / 1e6 / std::chrono::duration<double>(d).count();
}

double parse_rate(const std::string& data, std::size_t chunk, std::size_t& samples_out) {
    FormatConfig cfg;
    cfg.time_field = 0;
    ChannelSpec f;
    f.name = "force";
    f.field = 1;
    ChannelSpec e;
    e.name = "extension";
    e.unit = tensile::LengthUnit::millimetre;
    e.field = 2;
    ChannelSpec x = e;
    x.name = "crosshead";
    x.field = 3;
    cfg.channels = {f, e, x};
    auto p = builtin_formats().make(cfg);
    std::vector<Sample> out;
    out.reserve(chunk);
    samples_out = 0;
    const double c0 = thread_cpu_s();
    for (std::size_t at = 0; at < data.size(); at += chunk) {
        out.clear();
        p->feed(std::string_view(data).substr(at, chunk), out);
        samples_out += out.size();
    }
    const double c1 = thread_cpu_s();
    if (p->counters().stream.bad_records != 0) std::fprintf(stderr, "unexpected bad records\n");
    return static_cast<double>(data.size()) / 1e6 / (c1 - c0);
}

double memcpy_rate(const std::string& data, std::size_t chunk) {
    std::vector<char> dst(chunk);
    const double c0 = thread_cpu_s();
    std::size_t sum = 0;
    for (std::size_t at = 0; at < data.size(); at += chunk) {
        const std::size_t n = std::min(chunk, data.size() - at);
        std::memcpy(dst.data(), data.data() + at, n);
        sum += static_cast<unsigned char>(dst[n / 2]);
    }
    const double c1 = thread_cpu_s();
    if (sum == 42) std::puts("");  // keep the copies observable
    return static_cast<double>(data.size()) / 1e6 / (c1 - c0);
}

double loopback_rate(const std::string& data, std::size_t chunk) {
    const int ls = ::socket(AF_INET, SOCK_STREAM, 0);
    sockaddr_in a{};
    a.sin_family = AF_INET;
    a.sin_addr.s_addr = htonl(INADDR_LOOPBACK);
    socklen_t len = sizeof a;
    if (::bind(ls, reinterpret_cast<sockaddr*>(&a), sizeof a) != 0 || ::listen(ls, 1) != 0 ||
        ::getsockname(ls, reinterpret_cast<sockaddr*>(&a), &len) != 0)
        return 0;
    std::thread writer([&] {
        const int c = ::socket(AF_INET, SOCK_STREAM, 0);
        if (::connect(c, reinterpret_cast<sockaddr*>(&a), sizeof a) != 0) return;
        for (std::size_t at = 0; at < data.size();) {
            const ssize_t n = ::write(c, data.data() + at, std::min(chunk, data.size() - at));
            if (n <= 0) break;
            at += static_cast<std::size_t>(n);
        }
        ::close(c);
    });
    const int s = ::accept(ls, nullptr, nullptr);
    std::vector<char> buf(chunk);
    std::size_t got = 0;
    const auto t0 = clock_type::now();
    for (;;) {
        const ssize_t n = ::read(s, buf.data(), buf.size());
        if (n <= 0) break;
        got += static_cast<std::size_t>(n);
    }
    const auto t1 = clock_type::now();
    writer.join();
    ::close(s);
    ::close(ls);
    return mb_per_s(got, t1 - t0);
}

}  // namespace

int main(int argc, char** argv) {
    const std::size_t mb = argc > 1 ? static_cast<std::size_t>(std::strtoul(argv[1], nullptr, 10)) : 64;
    const std::string data = make_stream(mb * 1000 * 1000);
    const std::size_t chunk = 16384;  // the TCP source's read size
    std::size_t samples = 0;
    parse_rate(data, chunk, samples);  // warm caches and the allocator
    double best = 0;
    for (int i = 0; i < 3; ++i) best = std::max(best, parse_rate(data, chunk, samples));
    const double copy = memcpy_rate(data, chunk);
    const double pipe = loopback_rate(data, chunk);
    std::printf("data: %.1f MB of delimited lines, %zu samples per pass, %zu-byte chunks\n", data.size() / 1e6, samples, chunk);
    std::printf("(parser and memcpy: MB per CPU-second of one thread; loopback: wall clock, two threads)\n");
    std::printf("lines parser     : %8.1f MB/s  (%.1f M samples/s)  target >= 200 MB/s: %s\n", best,
                best * 1e6 / static_cast<double>(data.size()) * static_cast<double>(samples) / 1e6, best >= 200 ? "met" : "NOT met");
    std::printf("memcpy           : %8.1f MB/s\n", copy);
    std::printf("TCP loopback pipe: %8.1f MB/s\n", pipe);
    return 0;
}
