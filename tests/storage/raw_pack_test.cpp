// Raw chunks packed for storage: zstd frames that the zstd command-line tool
// (the reference implementation's own decoder, Debian package zstd) reads back
// byte for byte; plain for chunks that would not shrink; damage and unknown
// codecs refused with a message; rows written before packing still read.
#include <catch2/catch.hpp>

#include <fstream>

#include "daemon/storage/raw_chunk.hpp"
#include "daemon/storage/schema.hpp"
#include "daemon/storage/store.hpp"
#include "tests/support/process.hpp"
#include "temp_dir.hpp"

using namespace tensile;
using namespace tensile::storage;
using tensile::testing::TempDir;

namespace {

// Demo device text: a delimited-lines load cell, one read per 8 lines.
RawChunk device_text(std::size_t lines) {
    RawChunk c{"load-cell", 0, {}, {}};
    char buf[64];
    std::size_t read_start = 0;
    for (std::size_t i = 0; i < lines; ++i) {
        const int n = std::snprintf(buf, sizeof buf, "%zu,%.3f N,%.4f mm\r\n", 1000 + 10 * i,
                                    1523.42 + 0.37 * static_cast<double>(i % 97), 0.0001 * static_cast<double>(i));
        c.bytes.append(buf, static_cast<std::size_t>(n));
        if (i % 8 == 7 || i + 1 == lines) {
            c.arrivals.push_back({c.bytes.size() - read_start, 0.001 * static_cast<double>(i)});
            read_start = c.bytes.size();
        }
    }
    return c;
}

}  // namespace

TEST_CASE("device text is packed as standard zstd frames and comes back byte for byte", "[raw]") {
    const RawChunk chunk = device_text(8000);
    // Both efforts: thorough (level 1) and quick (a fast level, when the
    // recorder is behind) must give frames the reference decoder reads.
    const PackEffort effort = GENERATE(PackEffort::thorough, PackEffort::quick);
    const PackedRaw packed = pack_raw(chunk, effort);
    REQUIRE(packed.codec == raw_codec_zstd);
    REQUIRE(packed.plain_bytes == chunk.bytes.size());
    CHECK(packed.bytes.size() * 2 < chunk.bytes.size());  // text this regular shrinks well past half

    RawChunk back;
    REQUIRE(unpack_raw(packed.codec, packed.bytes, packed.arrivals, back).ok());
    CHECK(back.bytes == chunk.bytes);
    REQUIRE(back.arrivals.size() == chunk.arrivals.size());
    for (std::size_t i = 0; i < back.arrivals.size(); ++i) {
        CHECK(back.arrivals[i].length == chunk.arrivals[i].length);
        CHECK(back.arrivals[i].time_s == chunk.arrivals[i].time_s);
    }

    // The stored BLOB is a plain zstd frame: the zstd tool decodes it alone.
    TempDir dir;
    const auto file = dir.file("chunk.zst");
    { std::ofstream(file, std::ios::binary) << packed.bytes; }
    const auto ran = tensile::testing::run_command("zstd -q -d -c " + file);
    REQUIRE(ran.code == 0);
    CHECK(ran.out == chunk.bytes);
}

TEST_CASE("a chunk that would not shrink is kept plain", "[raw]") {
    const RawChunk tiny{"load-cell", 3, "7,1.5 N\n", {{8, 0.25}}};
    const PackedRaw packed = pack_raw(tiny);
    CHECK(packed.codec == raw_codec_plain);
    CHECK(packed.bytes == tiny.bytes);
    RawChunk back;
    REQUIRE(unpack_raw(packed.codec, packed.bytes, packed.arrivals, back).ok());
    CHECK(back.bytes == tiny.bytes);
    REQUIRE(back.arrivals.size() == 1);
    CHECK(back.arrivals[0].time_s == 0.25);
}

TEST_CASE("damaged packed bytes and unknown codecs are refused with a message", "[raw]") {
    const PackedRaw packed = pack_raw(device_text(2000));
    REQUIRE(packed.codec == raw_codec_zstd);
    RawChunk back;

    std::string cut = packed.bytes.substr(0, packed.bytes.size() / 2);
    auto s = unpack_raw(packed.codec, cut, packed.arrivals, back);
    REQUIRE_FALSE(s.ok());
    CHECK_THAT(s.error(), Catch::Contains("packed bytes are damaged"));

    std::string flipped = packed.bytes;
    flipped[0] = static_cast<char>(flipped[0] ^ 0x5a);  // the frame's magic number
    s = unpack_raw(packed.codec, flipped, packed.arrivals, back);
    REQUIRE_FALSE(s.ok());
    CHECK_THAT(s.error(), Catch::Contains("damaged"));

    s = unpack_raw(packed.codec, packed.bytes, "not zstd", back);
    REQUIRE_FALSE(s.ok());
    CHECK_THAT(s.error(), Catch::Contains("arrival times are damaged"));

    s = unpack_raw("lz77", packed.bytes, packed.arrivals, back);
    REQUIRE_FALSE(s.ok());
    CHECK_THAT(s.error(), Catch::Contains("unknown codec 'lz77'") && Catch::Contains("plain or zstd"));
}

TEST_CASE("raw chunks stored before packing still read after the migration", "[raw][store]") {
    TempDir dir;
    const auto path = dir.file("v2.db");
    const RawChunk old{"extensometer", 0, "12;0.0042\n13;0.0043\n", {{10, 1.5}, {10, 1.75}}};
    {
        auto db = Db::open(path, true);
        REQUIRE(db.ok());
        REQUIRE(migrate(*db, 2).ok());
        REQUIRE(db->exec("INSERT INTO runs (specimen, profile, config_snapshot, software_version, state, created_unix_s) "
                         "VALUES ('{}', '{}', '', '0.0.1', 'finished', 1.0)").ok());
        auto stmt = db->prepare("INSERT INTO raw_chunks (run_id, source, seq, bytes, arrivals) VALUES (1, ?, 0, ?, ?)");
        REQUIRE(stmt.ok());
        stmt->bind(1, old.source).bind_blob(2, old.bytes).bind_blob(3, encode_arrivals(old.arrivals));
        REQUIRE(stmt->run().ok());
    }
    auto store = Store::open(path);
    REQUIRE(store.ok());
    const RawChunk fresh = device_text(4000);
    REQUIRE(store->write_raw_chunk(1, RawChunk{"extensometer", 1, fresh.bytes, fresh.arrivals}, 2.0, 6.0).ok());
    std::vector<RawChunk> read;
    REQUIRE(store->for_each_raw_chunk(1, [&](const RawChunk& c) { read.push_back(c); }).ok());
    REQUIRE(read.size() == 2);
    CHECK(read[0].bytes == old.bytes);
    CHECK(read[0].arrivals.size() == 2);
    CHECK(read[1].bytes == fresh.bytes);
    auto codecs = store->db().prepare("SELECT group_concat(codec, ',') FROM (SELECT codec FROM raw_chunks ORDER BY seq)");
    REQUIRE(codecs.ok());
    REQUIRE(codecs->step().ok());
    CHECK(codecs->text(0) == "plain,zstd");
}
