// Commands from the daemon (drivers/wire-formats.md): LF-terminated text lines
// hold, resume, stop, extensometer-off, ping. CommandReader splits incoming
// bytes into lines (CR and blanks trimmed); parse_command gives the command or
// the exact '#error ...' answer to send back. Bad input is answered, never fatal.
#pragma once

#include <optional>
#include <string>
#include <string_view>
#include <vector>

namespace tensile::sim {

enum class Command { hold, resume, stop, extensometer_off, ping };
const char* name_of(Command c);

struct ParsedCommand {
    std::optional<Command> command;
    std::string answer;  // "#ok hold" or "#error ..."
};
ParsedCommand parse_command(std::string_view line);

class CommandReader {
public:
    static constexpr std::size_t max_line = 256;
    // Feeds bytes; returns the complete lines seen (an over-long line comes back
    // as a line of its first max_line bytes followed by a marker, so it is refused).
    std::vector<std::string> feed(std::string_view bytes);

private:
    std::string partial_;
    bool too_long_ = false;
};

}  // namespace tensile::sim
