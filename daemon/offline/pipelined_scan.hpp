// Reads a table on a second thread while the caller's sink takes the frames on
// this one, so parsing and analysis overlap on two cores. Frames pass in
// chunks through a small bounded queue; offline, the reader may wait for the
// consumer. Same outcome and error messages as scan_table. The caller's
// sink gets take_all() (chunks of frames) on this thread; passed() is called on the reading thread,
// as soon as the text behind it has been turned into frames.
#pragma once

#include "table_reader.hpp"

namespace tensile {

Result<TableInfo> scan_table_pipelined(std::string_view text, const TableLayout& layout, FrameSink& sink);

}  // namespace tensile
