// A small fuzz driver of our own for g++ builds, where libFuzzer is missing:
// it calls a target's LLVMFuzzerTestOneInput on every seed as it is, then on
// byte-level mutations of the seeds (bit flips, special bytes, inserted and
// deleted ranges, copied ranges, tokens, splices of two seeds) drawn from a
// fixed-seed generator, until the time budget is spent. No coverage feedback:
// it is a bounded smoke run meant for CI under ASan + UBSan, not a
// replacement for a long libFuzzer campaign.
//
// Deterministic: the same seeds and --seed give the same inputs in the same
// order, so "input N" of a run can be produced again.
//
// Error policy: a crash, a sanitizer report, an exception escaping the target
// or an input that runs longer than --hang-s writes the input to
// <seed dir>/crash-<fnv64 hex> (so it stays in the corpus and fails every
// later run until fixed), names the file on stderr and ends the process with
// a non-zero status. Bad arguments: a usage message and exit code 2.
//
//   fuzz_lines [--seconds 3] [--seed 1] [--max-len 65536] [--hang-s 10] SEED_DIR
//   fuzz_lines FILE...          runs each file once (to reproduce a crash)
#include <algorithm>
#include <atomic>
#include <chrono>
#include <csignal>
#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <exception>
#include <fcntl.h>
#include <filesystem>
#include <fstream>
#include <iterator>
#include <memory>
#include <string>
#include <thread>
#include <unistd.h>
#include <vector>

#if defined(__SANITIZE_ADDRESS__)
#define TENSILE_FUZZ_SANITIZED 1
#elif defined(__has_feature)
#if __has_feature(address_sanitizer)
#define TENSILE_FUZZ_SANITIZED 1
#endif
#endif
#ifdef TENSILE_FUZZ_SANITIZED
#include <sanitizer/common_interface_defs.h>
#endif

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size);

namespace {

// What the crash writer needs, set before each call; read from signal
// handlers, so plain data and async-signal-safe calls only.
const std::uint8_t* g_data = nullptr;
std::size_t g_size = 0;
char g_crash_dir[4096] = "";
std::atomic<std::uint64_t> g_calls{0};

void say(const char* s) { [[maybe_unused]] auto n = ::write(2, s, std::strlen(s)); }

// Writes the current input to <crash dir>/crash-<hash>; async-signal-safe.
void write_crash(const char* why) {
    static std::atomic<bool> once{false};
    if (once.exchange(true) || g_data == nullptr) return;
    std::uint64_t h = 1469598103934665603ull;  // FNV-1a 64
    for (std::size_t i = 0; i < g_size; ++i) h = (h ^ g_data[i]) * 1099511628211ull;
    char path[4200];
    std::size_t n = 0;
    for (const char* p = g_crash_dir; *p && n < 4096; ++p) path[n++] = *p;
    for (const char* p = "/crash-"; *p; ++p) path[n++] = *p;
    for (int shift = 60; shift >= 0; shift -= 4) path[n++] = "0123456789abcdef"[(h >> shift) & 15];
    path[n] = '\0';
    say("\nfuzz: ");
    say(why);
    say(": input written to ");
    say(path);
    say("\n");
    const int fd = ::open(path, O_WRONLY | O_CREAT | O_TRUNC, 0644);
    if (fd < 0) return say("fuzz: could not write the crashing input\n");
    std::size_t done = 0;
    while (done < g_size) {
        const auto w = ::write(fd, g_data + done, g_size - done);
        if (w <= 0) break;
        done += static_cast<std::size_t>(w);
    }
    ::close(fd);
}

void on_signal(int sig) {
    write_crash(sig == SIGABRT ? "abort" : sig == SIGSEGV ? "segmentation fault" : "fatal signal");
    std::signal(sig, SIG_DFL);
    std::raise(sig);
}

#ifdef TENSILE_FUZZ_SANITIZED
void on_sanitizer_death() { write_crash("sanitizer report"); }
#endif

// splitmix64: small, fast, the same sequence everywhere.
struct Rng {
    std::uint64_t s;
    std::uint64_t next() {
        std::uint64_t z = (s += 0x9e3779b97f4a7c15ull);
        z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ull;
        z = (z ^ (z >> 27)) * 0x94d049bb133111ebull;
        return z ^ (z >> 31);
    }
    std::size_t below(std::size_t n) { return n ? static_cast<std::size_t>(next() % n) : 0; }
};

using Bytes = std::vector<std::uint8_t>;

// Bytes and words that parsers of text, numbers, TOML, JSON, HTTP and CSV
// treat specially; a random byte rarely hits them.
const char* const tokens[] = {
    "\n", "\r\n", "\r", "\t", " ", ",", ";", "=", ":", ".", "-", "+", "e", "E", "\"", "'", "\\", "[", "]", "{",
    "}", "[[", "#", "%", "%00", "%zz", "&", "?", "/", "0", "-0", "1e308", "-1e308", "1e-320", "nan", "NaN", "inf",
    "-inf", "99999999999999999999", "4294967296", "-2147483649", "0x", "true", "null", "\xef\xbb\xbf", "\xc3\xa9",
    "\xff\xfe", "\xed\xa0\x80", "\x00", "Content-Length: ", "Transfer-Encoding: chunked\r\n", "\r\n\r\n",
};

void mutate_once(Bytes& b, const std::vector<Bytes>& seeds, Rng& r, std::size_t max_len) {
    const auto pos = [&](std::size_t extra) { return r.below(b.size() + extra); };
    switch (r.below(9)) {
    case 0:  // flip one bit
        if (!b.empty()) b[pos(0)] ^= static_cast<std::uint8_t>(1u << r.below(8));
        break;
    case 1: {  // set one byte to an edge value
        static const std::uint8_t edge[] = {0, 1, 0x7f, 0x80, 0xff, '0', '9', ' ', '\n', '"'};
        if (!b.empty()) b[pos(0)] = edge[r.below(sizeof edge)];
        break;
    }
    case 2: {  // insert random bytes
        const std::size_t at = pos(1), n = 1 + r.below(8);
        for (std::size_t i = 0; i < n; ++i) b.insert(b.begin() + static_cast<long>(at), static_cast<std::uint8_t>(r.next()));
        break;
    }
    case 3: {  // delete a range
        if (b.empty()) break;
        const std::size_t at = pos(0), n = 1 + r.below(std::min<std::size_t>(b.size() - at, 64));
        b.erase(b.begin() + static_cast<long>(at), b.begin() + static_cast<long>(at + n));
        break;
    }
    case 4: {  // copy a range of the input elsewhere in it
        if (b.empty()) break;
        const std::size_t from = pos(0), n = 1 + r.below(std::min<std::size_t>(b.size() - from, 128));
        const Bytes piece(b.begin() + static_cast<long>(from), b.begin() + static_cast<long>(from + n));
        b.insert(b.begin() + static_cast<long>(pos(1)), piece.begin(), piece.end());
        break;
    }
    case 5: {  // insert a token
        const std::string t = tokens[r.below(std::size(tokens))];
        const std::string_view tv = t.empty() ? std::string_view("\0", 1) : std::string_view(t);
        b.insert(b.begin() + static_cast<long>(pos(1)), tv.begin(), tv.end());
        break;
    }
    case 6: {  // splice: this input's head, another seed's tail
        const Bytes& o = seeds[r.below(seeds.size())];
        const std::size_t cut = pos(1), from = r.below(o.size() + 1);
        b.resize(cut);
        b.insert(b.end(), o.begin() + static_cast<long>(from), o.end());
        break;
    }
    case 7: {  // overwrite a range with a piece of another seed
        const Bytes& o = seeds[r.below(seeds.size())];
        if (o.empty() || b.empty()) break;
        const std::size_t from = r.below(o.size()), n = 1 + r.below(std::min<std::size_t>(o.size() - from, 64));
        const std::size_t at = pos(0);
        for (std::size_t i = 0; i < n && at + i < b.size(); ++i) b[at + i] = o[from + i];
        break;
    }
    default:  // truncate
        b.resize(pos(1));
        break;
    }
    if (b.size() > max_len) b.resize(max_len);
}

void run_one(const Bytes& input) {
    // A copy of exactly `size` bytes on the heap, so ASan sees reads past its end.
    std::unique_ptr<std::uint8_t[]> copy(new std::uint8_t[input.size() ? input.size() : 1]);
    if (!input.empty()) std::memcpy(copy.get(), input.data(), input.size());
    g_data = copy.get();
    g_size = input.size();
    try {
        LLVMFuzzerTestOneInput(copy.get(), input.size());
    } catch (const std::exception& e) {
        say("fuzz: exception escaped the target: ");
        say(e.what());
        write_crash("exception");
        std::_Exit(1);
    } catch (...) {
        write_crash("exception of unknown type");
        std::_Exit(1);
    }
    ++g_calls;
    g_data = nullptr;
}

Bytes read_file(const std::filesystem::path& p) {
    std::ifstream in(p, std::ios::binary);
    return Bytes(std::istreambuf_iterator<char>(in), std::istreambuf_iterator<char>());
}

int usage(const char* msg) {
    std::fprintf(stderr,
                 "%s\nusage: fuzz_TARGET [--seconds S] [--seed N] [--max-len BYTES] [--hang-s S] SEED_DIR\n"
                 "       fuzz_TARGET FILE...   (runs each file once)\n",
                 msg);
    return 2;
}

}  // namespace

int main(int argc, char** argv) {
    double seconds = 3, hang_s = 10;
    std::uint64_t seed = 1;
    std::size_t max_len = 64 * 1024;
    std::vector<std::string> paths;
    for (int i = 1; i < argc; ++i) {
        const std::string a = argv[i];
        const bool has_value = i + 1 < argc;
        try {
            if (a == "--seconds" && has_value) seconds = std::stod(argv[++i]);
            else if (a == "--seed" && has_value) seed = std::stoull(argv[++i]);
            else if (a == "--max-len" && has_value) max_len = std::stoull(argv[++i]);
            else if (a == "--hang-s" && has_value) hang_s = std::stod(argv[++i]);
            else if (a.rfind("--", 0) == 0) return usage(("unknown or incomplete option '" + a + "'").c_str());
            else paths.push_back(a);
        } catch (const std::exception&) {
            return usage(("option " + a + ": expected a number").c_str());
        }
    }
    if (paths.empty()) return usage("no seed folder or input file given");
    if (!(seconds >= 0) || !(hang_s > 0) || max_len == 0) return usage("--seconds, --hang-s and --max-len must be positive");

    for (int sig : {SIGABRT, SIGSEGV, SIGBUS, SIGFPE, SIGILL}) std::signal(sig, on_signal);
#ifdef TENSILE_FUZZ_SANITIZED
    __sanitizer_set_death_callback(on_sanitizer_death);
#endif

    const bool replay = !std::filesystem::is_directory(paths[0]);
    const std::filesystem::path crash_dir = replay ? std::filesystem::path(".") : std::filesystem::path(paths[0]);
    std::snprintf(g_crash_dir, sizeof g_crash_dir, "%s", crash_dir.c_str());

    // Watchdog: an input that does not return within hang_s is a hang.
    std::thread([hang_s] {
        std::uint64_t last = g_calls.load();
        auto since = std::chrono::steady_clock::now();
        for (;;) {
            std::this_thread::sleep_for(std::chrono::milliseconds(200));
            const auto now = std::chrono::steady_clock::now();
            if (g_calls.load() != last || g_data == nullptr) {
                last = g_calls.load();
                since = now;
            } else if (std::chrono::duration<double>(now - since).count() > hang_s) {
                write_crash("hang (no return within --hang-s)");
                std::_Exit(1);
            }
        }
    }).detach();

    if (replay) {
        for (const auto& p : paths) {
            std::fprintf(stderr, "fuzz: running %s\n", p.c_str());
            run_one(read_file(p));
        }
        std::fprintf(stderr, "fuzz: %zu input(s) ran without a finding\n", paths.size());
        return 0;
    }

    std::vector<std::filesystem::path> files;
    for (const auto& e : std::filesystem::directory_iterator(crash_dir))
        if (e.is_regular_file()) files.push_back(e.path());
    std::sort(files.begin(), files.end());  // directory order is not stable
    std::vector<Bytes> seeds;
    for (const auto& f : files) seeds.push_back(read_file(f));
    if (seeds.empty()) seeds.emplace_back();

    const auto start = std::chrono::steady_clock::now();
    for (const auto& s : seeds) run_one(s);

    Rng r{seed};
    Bytes input;
    std::uint64_t mutants = 0;
    while (std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count() < seconds) {
        // Half the time keep mutating the last input, so changes pile up.
        if (input.empty() || r.below(2) == 0) input = seeds[r.below(seeds.size())];
        for (std::size_t k = 1 + r.below(4); k > 0; --k) mutate_once(input, seeds, r, max_len);
        run_one(input);
        ++mutants;
    }
    const double took = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
    std::printf("fuzz: %zu seeds and %llu mutated inputs in %.1f s (seed %llu), no finding\n", seeds.size(),
                static_cast<unsigned long long>(mutants), took, static_cast<unsigned long long>(seed));
    return 0;
}
