// Files the fuzz targets work on.
//
// fixture_root(): a folder of real inputs at a fixed path, so the request
// dictionary and seeds can name them: /tmp/godwit-fuzz-v1/root holding
//   lib/spot-a.wav (+ .meta.json), lib/spot-b.flac   masters (synthesized)
//   h-20260314T060000.wav, h-20260314T060002.flac    recordings
//   log-2026-03-14.csv                               a planned log
//   noise.wav (random bytes), empty.wav (0 bytes), pipe.wav (a FIFO),
//   outside.wav (a link to /etc/hostname), sub/      the awkward cases
// Made once per machine (atomically: a fresh folder renamed into place),
// then only read.
//
// private_scratch_dir(name): a folder of this process's own (on /dev/shm
// when there is one: fsync and small writes cost little there), removed
// at exit.
//
// Thread contract: call from the fuzzer's thread only.
#pragma once

#include <filesystem>
#include <string>

namespace godwit::fuzz {

std::filesystem::path fixture_root();
std::filesystem::path private_scratch_dir(const std::string& name);

}  // namespace godwit::fuzz
