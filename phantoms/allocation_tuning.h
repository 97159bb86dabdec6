#pragma once
// Phantom generation allocates and frees image-sized buffers for every subject. By default glibc
// serves buffers above 128 KiB with fresh mmap() calls and hands freed heap memory back to the
// system, so every subject pays page faults for memory it just released (a third of the time
// for 256^2 and 64^3 subjects). Programs that generate many subjects call this once at start-up.

namespace frugal {

void keep_freed_image_memory();

}  // namespace frugal
