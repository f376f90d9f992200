/*
 * inject.c: I/O fault injection without root, for
 * tests/e2e/0806-io-fault-injection.sh.  Built by CMake as
 * build/libwl_fault.so and loaded with LD_PRELOAD, it counts the file
 * operations that write (below) and makes the N-th one fail with ENOSPC or
 * EIO, the way a full or failing disk would, then lets the program go on.
 *
 * Counted operations ("ops"), each with what its failure does:
 *   open    open/openat/creat/fopen that may create a file (O_CREAT, or a
 *           "w"/"a" mode): fails before anything is created.
 *   write   write/pwrite/writev/pwritev on a file opened for writing (by the
 *           calls above or without O_CREAT), and every buffer that stdio
 *           flushes to such a file: fails, nothing written.
 *   fsync   fsync/fdatasync on any descriptor: fails.
 *   close   close (and fclose) of a file opened for writing and written to
 *           (a close reports a write the kernel deferred; with no write
 *           there is none): the descriptor is released as the kernel always
 *           does, then -1 is returned.
 *   rename  rename/renameat/renameat2: fails, nothing renamed.
 * Standard output, standard error, pipes and sockets are never counted:
 * only descriptors that a counted call opened on a regular file.
 *
 * stdio writes inside glibc do not go through the exported write(), so a
 * stream opened for writing by fopen or fdopen is replaced by a
 * fopencookie() stream whose buffer flushes through the counted write (and
 * fileno() still returns its descriptor).  The data a program writes, and
 * where stdio flushes it, are unchanged: only the flush is observable.
 *
 * Environment:
 *   WL_FAULT_AT=N       fail the N-th op (1-based; unset or 0: count only)
 *   WL_FAULT_IN=any|root|child
 *                       which ops are counted toward N.  The counters live
 *                       in a shared mapping made when the first process
 *                       loads the shim, so they carry across fork() (and a
 *                       worker's ops are not counted twice): "any" (the
 *                       default) counts every op of the whole process tree in
 *                       one sequence; "root" only those of the process that
 *                       was started; "child" only those of the processes it
 *                       forked, in one sequence shared by all of them (with
 *                       one worker at a time, `batch -j 1`, that sequence is
 *                       the same from run to run, which "any" is not: the
 *                       parent's and a worker's ops interleave).  A program
 *                       started with exec() would load the shim again and
 *                       count afresh; wakeline never execs.
 *   WL_FAULT_ERRNO=ENOSPC|EIO   the error (default ENOSPC)
 *   WL_FAULT_OPS=open,write,fsync,close,rename   the kinds counted (default all)
 *   WL_FAULT_REPORT=FILE  appends "hit N OP PATH ERRNO pid P root|child" when
 *                       the fault is injected, and "total T any A root R
 *                       child C" when the started process exits (T: the
 *                       chosen counter)
 *   WL_FAULT_TRACE=FILE appends "N_any N_root N_child OP PATH root|child"
 *                       for every counted op (to choose N, or to read what a
 *                       program writes)
 * The shim is inert unless WL_FAULT_AT, WL_FAULT_REPORT or WL_FAULT_TRACE is
 * set.  PATH is the file's absolute path (for open and rename, the name
 * given, made absolute; for rename, the new name).
 *
 * Under AddressSanitizer the runtime wants to be the first library loaded;
 * run with ASAN_OPTIONS=verify_asan_link_order=0 (the shim itself is built
 * without sanitizers, and ASan's own interceptors sit behind it).
 */
#define _GNU_SOURCE
#include <dlfcn.h>
#include <errno.h>
#include <fcntl.h>
#include <limits.h>
#include <pthread.h>
#include <stdarg.h>
#include <stdatomic.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/mman.h>
#include <sys/stat.h>
#include <sys/syscall.h>
#include <sys/types.h>
#include <sys/uio.h>
#include <unistd.h>

#define MAX_FD 4096
#define MAX_STREAMS 1024

enum { OP_OPEN, OP_WRITE, OP_FSYNC, OP_CLOSE, OP_RENAME, OP_KINDS };
static const char *const op_names[OP_KINDS] = {"open", "write", "fsync", "close", "rename"};

enum { IN_ANY, IN_ROOT, IN_CHILD };

typedef struct {
	atomic_long any, root, child;
	atomic_int hit;
} counters;

static counters *cnt;
static int active, in_which = IN_ANY, fault_errno = ENOSPC, ops_mask = (1 << OP_KINDS) - 1;
static long fault_at;
static pid_t root_pid;
static int report_fd = -1, trace_fd = -1;

/* the next definitions of what we wrap (libc, or ASan's interceptors) */
static int (*real_open)(const char *, int, ...);
static int (*real_openat)(int, const char *, int, ...);
static ssize_t (*real_write)(int, const void *, size_t);
static ssize_t (*real_pwrite)(int, const void *, size_t, off_t);
static ssize_t (*real_writev)(int, const struct iovec *, int);
static ssize_t (*real_pwritev)(int, const struct iovec *, int, off_t);
static int (*real_fsync)(int);
static int (*real_fdatasync)(int);
static int (*real_close)(int);
static int (*real_rename)(const char *, const char *);
static int (*real_renameat)(int, const char *, int, const char *);
static int (*real_renameat2)(int, const char *, int, const char *, unsigned);
static FILE *(*real_fopen)(const char *, const char *);
static FILE *(*real_fdopen)(int, const char *);
static int (*real_fileno)(FILE *);

/* descriptors opened for writing on regular files: their paths */
static pthread_mutex_t lock = PTHREAD_MUTEX_INITIALIZER;
static char *fd_path[MAX_FD];
static unsigned char fd_wrote[MAX_FD];
static struct {
	FILE *fp;
	int fd;
} streams[MAX_STREAMS];

static pthread_once_t once = PTHREAD_ONCE_INIT;

/* the raw system call, for the one message before the pointers are known */
static int syscall_write_ok(int fd, const void *b, size_t n)
{
	return syscall(SYS_write, fd, b, n) == (long)n;
}

/* _FORTIFY_SOURCE's variants of open, declared by glibc only under fortify */
int __open_2(const char *path, int flags);
int __open64_2(const char *path, int flags);

/* stores the next definition of `name` in the function pointer at fp (ISO C
 * has no cast from dlsym's object pointer to a function pointer) */
static void next_sym(void *fp, const char *name)
{
	void *p = dlsym(RTLD_NEXT, name);
	if (!p) {
		static const char msg[] = "libwl_fault: a libc function is missing\n";
		if (syscall_write_ok(2, msg, sizeof msg - 1)) {
		}
		abort();
	}
	memcpy(fp, &p, sizeof p);
}

static void append_line(int fd, const char *fmt, ...)
{
	char line[PATH_MAX + 256];
	va_list ap;
	int n;
	if (fd < 0)
		return;
	va_start(ap, fmt);
	n = vsnprintf(line, sizeof line, fmt, ap);
	va_end(ap);
	if (n < 0)
		return;
	if (n >= (int)sizeof line)
		n = (int)sizeof line - 1;
	if (real_write(fd, line, (size_t)n) < 0) { /* O_APPEND: the line lands whole */
	}
}

static void init(void)
{
	const char *at = getenv("WL_FAULT_AT"), *rep = getenv("WL_FAULT_REPORT"),
	           *tr = getenv("WL_FAULT_TRACE"), *e = getenv("WL_FAULT_ERRNO"), *in = getenv("WL_FAULT_IN"),
	           *ops = getenv("WL_FAULT_OPS");
	next_sym(&real_open, "open");
	next_sym(&real_openat, "openat");
	next_sym(&real_write, "write");
	next_sym(&real_pwrite, "pwrite");
	next_sym(&real_writev, "writev");
	next_sym(&real_pwritev, "pwritev");
	next_sym(&real_fsync, "fsync");
	next_sym(&real_fdatasync, "fdatasync");
	next_sym(&real_close, "close");
	next_sym(&real_rename, "rename");
	next_sym(&real_renameat, "renameat");
	next_sym(&real_renameat2, "renameat2");
	next_sym(&real_fopen, "fopen");
	next_sym(&real_fdopen, "fdopen");
	next_sym(&real_fileno, "fileno");
	if (!at && !rep && !tr)
		return;
	fault_at = at ? atol(at) : 0;
	if (e && strcmp(e, "EIO") == 0)
		fault_errno = EIO;
	if (in && strcmp(in, "root") == 0)
		in_which = IN_ROOT;
	else if (in && strcmp(in, "child") == 0)
		in_which = IN_CHILD;
	if (ops && *ops) {
		ops_mask = 0;
		for (int k = 0; k < OP_KINDS; k++)
			if (strstr(ops, op_names[k]))
				ops_mask |= 1 << k;
	}
	cnt = mmap(NULL, sizeof *cnt, PROT_READ | PROT_WRITE, MAP_SHARED | MAP_ANONYMOUS, -1, 0);
	if (cnt == MAP_FAILED) {
		cnt = NULL;
		return;
	}
	root_pid = getpid();
	if (rep)
		report_fd = real_open(rep, O_WRONLY | O_CREAT | O_APPEND | O_CLOEXEC, 0644);
	if (tr)
		trace_fd = real_open(tr, O_WRONLY | O_CREAT | O_APPEND | O_CLOEXEC, 0644);
	active = 1;
}

static void ensure_init(void)
{
	pthread_once(&once, init);
}

__attribute__((constructor)) static void shim_load(void)
{
	ensure_init();
}

__attribute__((destructor)) static void shim_unload(void)
{
	long any, root, child, mine;
	if (!active || getpid() != root_pid)
		return;
	any = atomic_load(&cnt->any);
	root = atomic_load(&cnt->root);
	child = atomic_load(&cnt->child);
	mine = in_which == IN_ROOT ? root : in_which == IN_CHILD ? child : any;
	append_line(report_fd, "total %ld any %ld root %ld child %ld\n", mine, any, root, child);
}

/* count OP on PATH; returns 1 when this op is the one to fail (errno set) */
static int count_op(int op, const char *path)
{
	long a, r = 0, c = 0, mine;
	int is_root;
	if (!active || !(ops_mask & (1 << op)))
		return 0;
	is_root = getpid() == root_pid;
	a = atomic_fetch_add(&cnt->any, 1) + 1;
	if (is_root)
		r = atomic_fetch_add(&cnt->root, 1) + 1;
	else
		c = atomic_fetch_add(&cnt->child, 1) + 1;
	mine = in_which == IN_ANY ? a : in_which == IN_ROOT ? r : c;
	append_line(trace_fd, "%ld %ld %ld %s %s %s\n", a, r, c, op_names[op], path ? path : "?",
	            is_root ? "root" : "child");
	if (fault_at <= 0 || mine != fault_at)
		return 0;
	atomic_fetch_add(&cnt->hit, 1);
	append_line(report_fd, "hit %ld %s %s %s pid %ld %s\n", mine, op_names[op], path ? path : "?",
	            fault_errno == EIO ? "EIO" : "ENOSPC", (long)getpid(), is_root ? "root" : "child");
	errno = fault_errno;
	return 1;
}

/* ---- descriptors opened for writing ----------------------------------- */

static int wants_write(int flags)
{
	return (flags & O_ACCMODE) == O_WRONLY || (flags & O_ACCMODE) == O_RDWR;
}

static void track_fd(int fd)
{
	char link[64], path[PATH_MAX];
	struct stat st;
	ssize_t n;
	if (fd < 0 || fd >= MAX_FD || fstat(fd, &st) != 0 || !S_ISREG(st.st_mode))
		return;
	snprintf(link, sizeof link, "/proc/self/fd/%d", fd);
	n = readlink(link, path, sizeof path - 1);
	if (n < 0)
		n = 0;
	path[n] = '\0';
	pthread_mutex_lock(&lock);
	free(fd_path[fd]);
	fd_path[fd] = strdup(path);
	fd_wrote[fd] = 0;
	pthread_mutex_unlock(&lock);
}

/* the tracked path of fd copied into buf, or NULL if fd is not tracked;
 * *wrote (may be NULL) tells whether a write was made on it */
static const char *tracked_w(int fd, char *buf, size_t size, int *wrote)
{
	const char *r = NULL;
	if (!active || fd < 0 || fd >= MAX_FD)
		return NULL;
	pthread_mutex_lock(&lock);
	if (fd_path[fd]) {
		snprintf(buf, size, "%s", fd_path[fd]);
		r = buf;
		if (wrote)
			*wrote = fd_wrote[fd];
	}
	pthread_mutex_unlock(&lock);
	return r;
}

static const char *tracked(int fd, char *buf, size_t size)
{
	return tracked_w(fd, buf, size, NULL);
}

/* the tracked path of fd, marked as written to (for the writes) */
static const char *tracked_write(int fd, char *buf, size_t size)
{
	const char *p = tracked(fd, buf, size);
	if (p) {
		pthread_mutex_lock(&lock);
		fd_wrote[fd] = 1;
		pthread_mutex_unlock(&lock);
	}
	return p;
}

static void untrack_fd(int fd)
{
	if (fd < 0 || fd >= MAX_FD)
		return;
	pthread_mutex_lock(&lock);
	free(fd_path[fd]);
	fd_path[fd] = NULL;
	pthread_mutex_unlock(&lock);
}

/* a path made absolute against dirfd (for the trace and the report) */
static const char *abs_path(int dirfd, const char *p, char *buf, size_t size)
{
	char dir[PATH_MAX];
	if (!p || p[0] == '/')
		return p;
	if (dirfd == AT_FDCWD) {
		if (!getcwd(dir, sizeof dir))
			return p;
	} else {
		char link[64];
		ssize_t n;
		snprintf(link, sizeof link, "/proc/self/fd/%d", dirfd);
		n = readlink(link, dir, sizeof dir - 1);
		if (n < 0)
			return p;
		dir[n] = '\0';
	}
	snprintf(buf, size, "%s/%s", dir, p);
	return buf;
}

static int open_common(int dirfd, const char *path, int flags, mode_t mode)
{
	char buf[PATH_MAX];
	int fd;
	ensure_init();
	if (active && (flags & O_CREAT) && count_op(OP_OPEN, abs_path(dirfd, path, buf, sizeof buf)))
		return -1;
	fd = dirfd == AT_FDCWD ? real_open(path, flags, mode) : real_openat(dirfd, path, flags, mode);
	if (active && fd >= 0 && wants_write(flags))
		track_fd(fd);
	return fd;
}

static mode_t mode_arg(int flags, va_list ap)
{
	return (flags & O_CREAT) || (flags & O_TMPFILE) == O_TMPFILE ? (mode_t)va_arg(ap, int) : 0;
}

int open(const char *path, int flags, ...)
{
	va_list ap;
	mode_t mode;
	va_start(ap, flags);
	mode = mode_arg(flags, ap);
	va_end(ap);
	return open_common(AT_FDCWD, path, flags, mode);
}

int open64(const char *path, int flags, ...)
{
	va_list ap;
	mode_t mode;
	va_start(ap, flags);
	mode = mode_arg(flags, ap);
	va_end(ap);
	return open_common(AT_FDCWD, path, flags, mode);
}

int openat(int dirfd, const char *path, int flags, ...)
{
	va_list ap;
	mode_t mode;
	va_start(ap, flags);
	mode = mode_arg(flags, ap);
	va_end(ap);
	return open_common(dirfd, path, flags, mode);
}

int openat64(int dirfd, const char *path, int flags, ...)
{
	va_list ap;
	mode_t mode;
	va_start(ap, flags);
	mode = mode_arg(flags, ap);
	va_end(ap);
	return open_common(dirfd, path, flags, mode);
}

/* _FORTIFY_SOURCE's variants (no mode: O_CREAT cannot be among the flags) */
int __open_2(const char *path, int flags)
{
	return open_common(AT_FDCWD, path, flags, 0);
}

int __open64_2(const char *path, int flags)
{
	return open_common(AT_FDCWD, path, flags, 0);
}

int creat(const char *path, mode_t mode)
{
	return open_common(AT_FDCWD, path, O_WRONLY | O_CREAT | O_TRUNC, mode);
}

int creat64(const char *path, mode_t mode)
{
	return open_common(AT_FDCWD, path, O_WRONLY | O_CREAT | O_TRUNC, mode);
}

/* ---- writes ------------------------------------------------------------ */

static ssize_t do_write(int fd, const void *b, size_t n)
{
	char buf[PATH_MAX];
	const char *p = tracked_write(fd, buf, sizeof buf);
	if (p && count_op(OP_WRITE, p))
		return -1;
	return real_write(fd, b, n);
}

ssize_t write(int fd, const void *b, size_t n)
{
	ensure_init();
	return do_write(fd, b, n);
}

ssize_t pwrite(int fd, const void *b, size_t n, off_t off)
{
	char buf[PATH_MAX];
	const char *p;
	ensure_init();
	p = tracked_write(fd, buf, sizeof buf);
	if (p && count_op(OP_WRITE, p))
		return -1;
	return real_pwrite(fd, b, n, off);
}

ssize_t pwrite64(int fd, const void *b, size_t n, off_t off)
{
	return pwrite(fd, b, n, off);
}

ssize_t writev(int fd, const struct iovec *iov, int cnt_)
{
	char buf[PATH_MAX];
	const char *p;
	ensure_init();
	p = tracked_write(fd, buf, sizeof buf);
	if (p && count_op(OP_WRITE, p))
		return -1;
	return real_writev(fd, iov, cnt_);
}

ssize_t pwritev(int fd, const struct iovec *iov, int cnt_, off_t off)
{
	char buf[PATH_MAX];
	const char *p;
	ensure_init();
	p = tracked_write(fd, buf, sizeof buf);
	if (p && count_op(OP_WRITE, p))
		return -1;
	return real_pwritev(fd, iov, cnt_, off);
}

/* ---- fsync, close, rename ---------------------------------------------- */

static const char *fd_name(int fd, char *buf, size_t size)
{
	char link[64];
	ssize_t n;
	const char *p = tracked(fd, buf, size);
	if (p)
		return p;
	snprintf(link, sizeof link, "/proc/self/fd/%d", fd);
	n = readlink(link, buf, size - 1);
	if (n < 0)
		return "?";
	buf[n] = '\0';
	return buf;
}

int fsync(int fd)
{
	char buf[PATH_MAX];
	ensure_init();
	if (active && count_op(OP_FSYNC, fd_name(fd, buf, sizeof buf)))
		return -1;
	return real_fsync(fd);
}

int fdatasync(int fd)
{
	char buf[PATH_MAX];
	ensure_init();
	if (active && count_op(OP_FSYNC, fd_name(fd, buf, sizeof buf)))
		return -1;
	return real_fdatasync(fd);
}

static int do_close(int fd)
{
	char buf[PATH_MAX];
	int wrote = 0;
	const char *p = tracked_w(fd, buf, sizeof buf, &wrote);
	int fail = p && wrote && count_op(OP_CLOSE, p), e = errno, r;
	if (p)
		untrack_fd(fd);
	r = real_close(fd);
	if (fail) {
		errno = e;
		return -1;
	}
	return r;
}

int close(int fd)
{
	ensure_init();
	return do_close(fd);
}

int rename(const char *from, const char *to)
{
	char buf[PATH_MAX];
	ensure_init();
	if (active && count_op(OP_RENAME, abs_path(AT_FDCWD, to, buf, sizeof buf)))
		return -1;
	return real_rename(from, to);
}

int renameat(int fromfd, const char *from, int tofd, const char *to)
{
	char buf[PATH_MAX];
	ensure_init();
	if (active && count_op(OP_RENAME, abs_path(tofd, to, buf, sizeof buf)))
		return -1;
	return real_renameat(fromfd, from, tofd, to);
}

int renameat2(int fromfd, const char *from, int tofd, const char *to, unsigned flags)
{
	char buf[PATH_MAX];
	ensure_init();
	if (active && count_op(OP_RENAME, abs_path(tofd, to, buf, sizeof buf)))
		return -1;
	return real_renameat2(fromfd, from, tofd, to, flags);
}

/* ---- stdio streams on counted descriptors ------------------------------ */

typedef struct {
	int fd;
	FILE *fp;
} cookie;

static ssize_t ck_read(void *c, char *b, size_t n)
{
	return read(((cookie *)c)->fd, b, n);
}

static ssize_t ck_write(void *c, const char *b, size_t n)
{
	size_t done = 0;
	while (done < n) {
		ssize_t w = do_write(((cookie *)c)->fd, b + done, n - done);
		if (w < 0) {
			if (errno == EINTR)
				continue;
			return done ? (ssize_t)done : -1;
		}
		done += (size_t)w;
	}
	return (ssize_t)done;
}

static int ck_seek(void *c, off64_t *pos, int whence)
{
	off64_t r = lseek64(((cookie *)c)->fd, *pos, whence);
	if (r < 0)
		return -1;
	*pos = r;
	return 0;
}

static int ck_close(void *c)
{
	cookie *k = c;
	int r;
	pthread_mutex_lock(&lock);
	for (int i = 0; i < MAX_STREAMS; i++)
		if (streams[i].fp == k->fp) {
			streams[i].fp = NULL;
			break;
		}
	pthread_mutex_unlock(&lock);
	r = do_close(k->fd);
	free(k);
	return r;
}

/* a stream on fd whose flushes are counted, or the ordinary one */
static FILE *counted_stream(int fd, const char *mode)
{
	char buf[PATH_MAX];
	cookie *k;
	FILE *fp;
	int slot = -1;
	if (!tracked(fd, buf, sizeof buf))
		return real_fdopen(fd, mode);
	k = malloc(sizeof *k);
	if (!k)
		return NULL;
	k->fd = fd;
	fp = fopencookie(k, mode, (cookie_io_functions_t){ck_read, ck_write, ck_seek, ck_close});
	if (!fp) {
		free(k);
		return NULL;
	}
	k->fp = fp;
	pthread_mutex_lock(&lock);
	for (int i = 0; i < MAX_STREAMS && slot < 0; i++)
		if (!streams[i].fp)
			slot = i;
	if (slot >= 0) {
		streams[slot].fp = fp;
		streams[slot].fd = fd;
	}
	pthread_mutex_unlock(&lock);
	return fp;
}

FILE *fdopen(int fd, const char *mode)
{
	ensure_init();
	if (!active || !strpbrk(mode, "wa+"))
		return real_fdopen(fd, mode);
	return counted_stream(fd, mode);
}

static FILE *fopen_common(const char *path, const char *mode)
{
	int flags, fd;
	FILE *fp;
	ensure_init();
	if (!active || !strpbrk(mode, "wa+"))
		return real_fopen(path, mode);
	flags = strchr(mode, '+') ? O_RDWR : mode[0] == 'r' ? O_RDONLY : O_WRONLY;
	if (mode[0] == 'w')
		flags |= O_CREAT | O_TRUNC;
	else if (mode[0] == 'a')
		flags |= O_CREAT | O_APPEND;
	if (strchr(mode, 'x'))
		flags |= O_EXCL;
	if (strchr(mode, 'e'))
		flags |= O_CLOEXEC;
	fd = open_common(AT_FDCWD, path, flags, 0666);
	if (fd < 0)
		return NULL;
	fp = counted_stream(fd, mode);
	if (!fp) {
		int e = errno;
		do_close(fd);
		errno = e;
	}
	return fp;
}

FILE *fopen(const char *path, const char *mode)
{
	return fopen_common(path, mode);
}

FILE *fopen64(const char *path, const char *mode)
{
	return fopen_common(path, mode);
}

int fileno(FILE *fp)
{
	int fd = -1;
	ensure_init();
	if (active) {
		pthread_mutex_lock(&lock);
		for (int i = 0; i < MAX_STREAMS; i++)
			if (streams[i].fp == fp) {
				fd = streams[i].fd;
				break;
			}
		pthread_mutex_unlock(&lock);
	}
	return fd >= 0 ? fd : real_fileno(fp);
}

int fileno_unlocked(FILE *fp)
{
	return fileno(fp);
}
