// See parser_registry.hpp.
#include "parser_registry.hpp"

#include <stdexcept>

namespace tensile::drivers {

// Factories, one per format file.
std::unique_ptr<Parser> make_lines_parser(const FormatConfig&);
std::unique_ptr<Parser> make_keyvalue_parser(const FormatConfig&);
std::unique_ptr<Parser> make_binary_parser(const FormatConfig&);
std::unique_ptr<Parser> make_control_parser(const FormatConfig&);

ParserRegistry builtin_formats() {
    ParserRegistry r;
    r.add({"lines", make_lines_parser, 64});
    r.add({"keyvalue", make_keyvalue_parser, 64});
    r.add({"binary", make_binary_parser, 32});
    r.add({"control", make_control_parser, 64, false});
    return r;
}

void ParserRegistry::add(FormatInfo info) {
    auto name = info.name;
    formats_.insert_or_assign(std::move(name), std::move(info));
}

const FormatInfo* ParserRegistry::find(const std::string& name) const {
    const auto it = formats_.find(name);
    return it == formats_.end() ? nullptr : &it->second;
}

std::vector<std::string> ParserRegistry::names() const {
    std::vector<std::string> n;
    for (const auto& [k, v] : formats_) n.push_back(k);
    return n;
}

std::unique_ptr<Parser> ParserRegistry::make(const FormatConfig& cfg) const {
    const FormatInfo* f = find(cfg.format);
    if (!f) {
        std::string known;
        for (const auto& n : names()) known += (known.empty() ? "" : ", ") + n;
        throw std::invalid_argument("unknown format \"" + cfg.format + "\"; expected one of: " + known);
    }
    return f->make(cfg);
}

}  // namespace tensile::drivers
