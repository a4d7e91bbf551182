// Command parsing; see commands.hpp.
#include "commands.hpp"

namespace tensile::sim {

const char* name_of(Command c) {
    switch (c) {
        case Command::hold: return "hold";
        case Command::resume: return "resume";
        case Command::stop: return "stop";
        case Command::extensometer_off: return "extensometer-off";
        case Command::ping: return "ping";
    }
    return "?";
}

ParsedCommand parse_command(std::string_view line) {
    while (!line.empty() && (line.back() == '\r' || line.back() == ' ' || line.back() == '\t')) line.remove_suffix(1);
    while (!line.empty() && (line.front() == ' ' || line.front() == '\t')) line.remove_prefix(1);
    for (Command c : {Command::hold, Command::resume, Command::stop, Command::extensometer_off, Command::ping})
        if (line == name_of(c)) return {c, std::string("#ok ") + name_of(c)};
    std::string shown;
    for (char ch : line.substr(0, 40)) shown += (ch >= 0x20 && ch < 0x7F) ? ch : '?';
    if (line.size() > 40) shown += "...";
    return {std::nullopt, "#error unknown command '" + shown + "'; expected hold, resume, stop, extensometer-off or ping"};
}

std::vector<std::string> CommandReader::feed(std::string_view bytes) {
    std::vector<std::string> lines;
    for (char ch : bytes) {
        if (ch == '\n') {
            if (too_long_) partial_ += "... (line too long)";
            lines.push_back(std::move(partial_));
            partial_.clear();
            too_long_ = false;
        } else if (partial_.size() < max_line) {
            partial_.push_back(ch);
        } else {
            too_long_ = true;
        }
    }
    return lines;
}

}  // namespace tensile::sim
