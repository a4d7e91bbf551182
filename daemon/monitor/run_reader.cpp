// The API's reader thread; see run_reader.hpp.
#include "run_reader.hpp"

#include <boost/asio/post.hpp>
#include <stdexcept>

namespace tensile::monitor {

RunReader::RunReader(boost::asio::io_context& io, const std::filesystem::path& database) : io_(io) {
    auto store = storage::Store::open(database.string());
    if (!store) throw std::runtime_error("monitor: cannot open " + database.string() + " for reading: " + store.error());
    store_.emplace(std::move(*store));
    thread_ = std::thread([this] { loop(); });
}

RunReader::~RunReader() { stop(); }

void RunReader::stop() {
    {
        std::lock_guard lock(mutex_);
        stopping_ = true;
    }
    wake_.notify_all();
    if (thread_.joinable()) thread_.join();
}

void RunReader::submit(Job job, Done done) {
    {
        std::lock_guard lock(mutex_);
        if (!stopping_ && jobs_.size() < queue_limit) {
            jobs_.emplace_back(std::move(job), std::move(done));
            wake_.notify_one();
            return;
        }
    }
    done(error_reply(503, "too many stored-run requests at once; try again shortly"));
}

void RunReader::loop() {
    for (;;) {
        std::pair<Job, Done> next;
        {
            std::unique_lock lock(mutex_);
            wake_.wait(lock, [this] { return stopping_ || !jobs_.empty(); });
            if (stopping_) return;
            next = std::move(jobs_.front());
            jobs_.pop_front();
        }
        Reply reply;
        try {
            reply = next.first(*store_);
        } catch (const std::exception& e) {
            reply = error_reply(500, std::string("reading the database failed: ") + e.what());
        }
        boost::asio::post(io_, [done = std::move(next.second), reply = std::move(reply)]() mutable { done(std::move(reply)); });
    }
}

}  // namespace tensile::monitor
