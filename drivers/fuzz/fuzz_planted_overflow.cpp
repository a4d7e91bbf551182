// A target with a planted bug, to prove the fuzz driver and the sanitizers
// catch what they are there for (tests/hardening runs it and expects a
// failure and a kept input): any input longer than 8 bytes that starts with
// 'B' is read one byte past its end, a heap-buffer-overflow for ASan. The
// seed is "BBBBBBBB", so the driver must mutate (insert) to find it.
#include <cstdint>

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
    if (size > 8 && data[0] == 'B') {
        volatile std::uint8_t past_end = data[size];  // the planted bug (volatile: the read stays)
        (void)past_end;
    }
    return 0;
}
