// Parser for a command port (`control` in wire-formats.md): a text link that
// carries no data, only the rig's answers to commands (`#ok hold`, `#error
// ...`), one per line. The answers go to the message handler, where the
// command output waits for them. Error policy: anything else on the port is
// not ours: the line is counted as a bad record and its bytes as resync bytes.
// A control source has no channels. Nothing throws after construction.
#include <stdexcept>

#include "text_line_parser.hpp"

namespace tensile::drivers {

namespace {

class ControlParser final : public TextLineParser {
public:
    explicit ControlParser(FormatConfig cfg) : TextLineParser(std::move(cfg)) {
        if (!config_.channels.empty()) throw std::invalid_argument("control format: a command port carries no channels");
    }

private:
    void on_line(std::string_view line, std::vector<Sample>&) override {
        if (line.front() == '#') deliver_message(line);
        else discard(line.size(), true);
    }
};

}  // namespace

std::unique_ptr<Parser> make_control_parser(const FormatConfig& cfg) { return std::make_unique<ControlParser>(cfg); }

}  // namespace tensile::drivers
