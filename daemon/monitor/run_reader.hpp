// Reads stored runs for the API on a thread of its own, with its own database
// connection (WAL lets it read beside the recorder), so a large export or a
// slow disk never holds up the io_context thread that runs acquisition. Jobs
// wait in a bounded queue (16); when it is full the request gets 503 at once.
// Each job's reply is posted back to the io_context.
//
// Error policy: opening is start-up (throws std::runtime_error naming the
// file); a job's own errors become its reply; a job that throws gets 500.
#pragma once

#include <condition_variable>
#include <deque>
#include <filesystem>
#include <functional>
#include <mutex>
#include <optional>
#include <thread>

#include <boost/asio/io_context.hpp>

#include "daemon/storage/store.hpp"
#include "reply.hpp"

namespace tensile::monitor {

class RunReader {
public:
    static constexpr std::size_t queue_limit = 16;
    using Job = std::function<Reply(storage::Store&)>;
    using Done = std::function<void(Reply)>;

    RunReader(boost::asio::io_context& io, const std::filesystem::path& database);
    ~RunReader();
    RunReader(const RunReader&) = delete;
    RunReader& operator=(const RunReader&) = delete;

    // Runs `job` on the reader thread; `done` is called on the io_context.
    void submit(Job job, Done done);
    void stop();

private:
    void loop();

    boost::asio::io_context& io_;
    std::optional<storage::Store> store_;
    std::mutex mutex_;
    std::condition_variable wake_;
    std::deque<std::pair<Job, Done>> jobs_;
    bool stopping_ = false;
    std::thread thread_;
};

}  // namespace tensile::monitor
