/* fuzz_file.h: for fuzz targets whose loader takes a path: the input goes
 * into an anonymous in-memory file (memfd) and is read back through
 * /proc/self/fd/N, so no file is left behind and nothing touches the disk. */
#ifndef WL_FUZZ_FILE_H
#define WL_FUZZ_FILE_H

#include <stdint.h>
#include <stdio.h>
#include <sys/mman.h>
#include <unistd.h>

/* Writes data to a new memfd and its path to path; returns the fd (close it
 * after use) or -1. */
static int fuzz_memfile(const uint8_t *data, size_t size, char *path, size_t cap)
{
	int fd = memfd_create("fuzz", 0);
	size_t done = 0;
	if (fd < 0)
		return -1;
	while (done < size) {
		ssize_t w = write(fd, data + done, size - done);
		if (w <= 0) {
			close(fd);
			return -1;
		}
		done += (size_t)w;
	}
	snprintf(path, cap, "/proc/self/fd/%d", fd);
	return fd;
}

#endif
