/* A full disk, simulated for one file: loaded with LD_PRELOAD, this shim
 * makes write(), writev() and pwrite() fail with ENOSPC on every file
 * descriptor whose path contains the text in BACKCOMB_ENOSPC_MATCH, after
 * the first BACKCOMB_ENOSPC_AFTER bytes (default 0) written to it, as a
 * file system that runs out of space part-way through a file would.
 * Every other write goes through unchanged. Only writes that pass through
 * the dynamic linker are seen (C++ streams, VTK, most libraries);
 * stdio's FILE functions write inside the C library and are not.
 */
#define _GNU_SOURCE
#include <dlfcn.h>
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/uio.h>
#include <unistd.h>

#define MAX_FD 4096
static long long written[MAX_FD];

/* Bytes still allowed on fd, or -1 when the fd is not a target. */
static long long
allowance(int fd)
{
  const char *match = getenv("BACKCOMB_ENOSPC_MATCH");
  if (!match || !*match || fd < 0 || fd >= MAX_FD)
    return -1;
  char link[64], path[4096];
  snprintf(link, sizeof link, "/proc/self/fd/%d", fd);
  const ssize_t n = readlink(link, path, sizeof path - 1);
  if (n <= 0)
    return -1;
  path[n] = '\0';
  if (!strstr(path, match))
    return -1;
  const char     *after = getenv("BACKCOMB_ENOSPC_AFTER");
  const long long limit = after ? atoll(after) : 0;
  return written[fd] >= limit ? 0 : limit - written[fd];
}

ssize_t
write(int fd, const void *buf, size_t count)
{
  static ssize_t (*real)(int, const void *, size_t);
  if (!real)
    real = (ssize_t(*)(int, const void *, size_t))dlsym(RTLD_NEXT, "write");
  const long long left = allowance(fd);
  if (left == 0 && count > 0)
    {
      errno = ENOSPC;
      return -1;
    }
  if (left > 0 && (long long)count > left)
    count = (size_t)left;
  const ssize_t r = real(fd, buf, count);
  if (r > 0 && left >= 0)
    written[fd] += r;
  return r;
}

ssize_t
pwrite(int fd, const void *buf, size_t count, off_t offset)
{
  static ssize_t (*real)(int, const void *, size_t, off_t);
  if (!real)
    real = (ssize_t(*)(int, const void *, size_t, off_t))dlsym(RTLD_NEXT, "pwrite");
  if (allowance(fd) == 0 && count > 0)
    {
      errno = ENOSPC;
      return -1;
    }
  return real(fd, buf, count, offset);
}

ssize_t
writev(int fd, const struct iovec *iov, int iovcnt)
{
  static ssize_t (*real)(int, const struct iovec *, int);
  if (!real)
    real = (ssize_t(*)(int, const struct iovec *, int))dlsym(RTLD_NEXT, "writev");
  const long long left = allowance(fd);
  if (left >= 0)
    {
      /* Partial vectors are written by the plain write() above, one
       * buffer at a time, so that the byte limit holds exactly. */
      ssize_t total = 0;
      for (int i = 0; i < iovcnt; ++i)
        {
          const ssize_t r = write(fd, iov[i].iov_base, iov[i].iov_len);
          if (r < 0)
            return total > 0 ? total : -1;
          total += r;
          if ((size_t)r < iov[i].iov_len)
            break;
        }
      return total;
    }
  return real(fd, iov, iovcnt);
}

int
close(int fd)
{
  static int (*real)(int);
  if (!real)
    real = (int (*)(int))dlsym(RTLD_NEXT, "close");
  if (fd >= 0 && fd < MAX_FD)
    written[fd] = 0; /* the number may be reused for another file */
  return real(fd);
}
