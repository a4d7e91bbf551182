// `tensile-sim replay`: a stored run played back as a live device. The raw
// bytes tensiled kept for one source of the run go out over TCP, a
// pseudo-terminal or to a file in their original arrival timing (scaled by
// --speed) or as fast as the reader takes them, so a daemon can be tested on
// a real recorded test. The bytes are those recorded, including the rig's
// answers to commands at the time; commands sent to the replay are read and
// ignored, since a recording cannot obey them.
//
// Error policy: bad options, an unreadable database, an unknown run or a run
// without raw bytes end with one message and exit code 2 before anything is
// sent; a reader that goes away ends the replay with exit code 1.
#pragma once

namespace tensile::sim {

// argv[0] is "replay". Returns the process exit code.
int replay_main(int argc, char** argv);

}  // namespace tensile::sim
