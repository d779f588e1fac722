// Byte-level helpers shared by the daemon's own file formats (snapshot files, journal segments):
// little-endian fixed-width integers, reading a whole regular file, writing all bytes, and making a
// directory entry durable.
//
// Integers are written least significant byte first whatever the host, so the files move between
// machines. ReadRegularFile opens without following a link and without blocking on a FIFO, and
// refuses anything but a regular file. Thread safe (no shared state).
#pragma once

#include <cstdint>
#include <filesystem>
#include <string>
#include <string_view>

namespace bayline::server {

void PutLittleEndian32(std::string& out, uint32_t v);
void PutLittleEndian64(std::string& out, uint64_t v);
// Precondition: at + 4 (8) <= bytes.size().
uint32_t GetLittleEndian32(std::string_view bytes, size_t at);
uint64_t GetLittleEndian64(std::string_view bytes, size_t at);

// "<step> <path>: <strerror(errno)>".
std::string ErrnoText(std::string_view step, const std::filesystem::path& path);

// The whole content of the regular file at `path`; false with *error naming the path and the cause
// (missing, a link, not a regular file, a read error).
bool ReadRegularFile(const std::filesystem::path& path, std::string* bytes, std::string* error);

// write(2) until every byte is written (retrying EINTR); false with errno set on an error.
bool WriteAll(int fd, const char* data, size_t size);

// fsync(2) of a directory, so that a file created or renamed in it survives a power loss.
bool FsyncDirectory(const std::filesystem::path& dir, std::string* error);

}  // namespace bayline::server
