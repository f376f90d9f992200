/*
 * test_shards.c: shards of one sweep side by side on one output folder, as
 * the tasks of a cluster job array run them.
 *
 * - The race: 50 rounds of 3 shards released at the same instant (a pipe
 *   that all of them wait on is closed) on a fresh OUT; no shard may fail.
 *   Before the fix each shard deleted every temporary file at the top of OUT
 *   on start, among them another shard's half-written batch.json, which
 *   then failed "cannot write .../batch.json" (3 in 20 trials when found).
 *
 * The clip function is a test double that writes one small summary.json;
 * it tests the runner, not the processing.
 */
#define _GNU_SOURCE
#include <fcntl.h>
#include <sched.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/file.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

#include <cmocka.h>

#include "batch/batch.h"
#include "batch/batch_priv.h"
#include "core/afile.h"
#include "core/csvio.h"
#include "core/jsonio.h"

static char root[256];

static void mkfile(const char *rel, const char *text)
{
	char path[600], dir[600], *slash;
	FILE *fp;
	snprintf(path, sizeof path, "%s/%s", root, rel);
	snprintf(dir, sizeof dir, "%s", path);
	slash = strrchr(dir, '/');
	*slash = '\0';
	assert_int_equal(wl_mkdirs(dir, NULL), WL_OK);
	fp = fopen(path, "w");
	assert_non_null(fp);
	fputs(text, fp);
	fclose(fp);
}

static int setup(void **state)
{
	(void)state;
	snprintf(root, sizeof root, "/tmp/wl_test_shards_XXXXXX");
	return mkdtemp(root) ? 0 : -1;
}

static int teardown(void **state)
{
	char cmd[400];
	(void)state;
	snprintf(cmd, sizeof cmd, "rm -rf '%s'", root);
	return system(cmd) == 0 ? 0 : -1;
}

static const char *const OUTPUTS[] = {"summary.json", NULL};

/* A clip that is done at once: one run whose curvature is the clip's
 * content; a clip whose content starts with FAIL fails. */
static wl_status quick_clip(const wl_batch_job *job, void *ctx, wl_err *err)
{
	char *content = NULL, buf[256], path[4200];
	size_t len = 0;
	wl_status s;
	(void)ctx;
	if ((s = wl_read_file(job->clip_path, 4096, &content, &len, err)))
		return s;
	if (strncmp(content, "FAIL", 4) == 0) {
		free(content);
		return wl_err_set(err, WL_EDECODE, "%s: frame 3: invalid data: re-encode the clip",
		                  job->clip_rel);
	}
	snprintf(buf, sizeof buf,
	         "{\"format\":\"wakeline "
	         "summary\",\"runs\":[{\"id\":1,\"segment\":0,\"headline\":true,\"curvature_per_m\":%s,"
	         "\"straight\":"
	         "false}]}\n",
	         content);
	free(content);
	snprintf(path, sizeof path, "%s/summary.json", job->out_dir);
	return wl_write_file_atomic(path, buf, strlen(buf), err);
}

static void opts_for(wl_batch_opts *o, const char *clips, const char *out, const char *cal)
{
	memset(o, 0, sizeof *o);
	o->clip_dir = clips;
	o->out_dir = out;
	o->cal_path = cal;
	o->jobs = 1;
	o->settings = "test settings v1";
	o->outputs = OUTPUTS;
	o->fn = quick_clip;
}

/* Starts shard k/n of the sweep in a child that waits until `gate` is
 * closed; the child exits 0 when the shard ran and no clip failed, else 1
 * after printing why. */
static pid_t start_shard(const char *clips, const char *out, const char *cal, int k, int n, const int gate[2])
{
	pid_t pid;
	fflush(NULL);
	pid = fork();
	if (pid == 0) {
		wl_batch_opts o;
		wl_batch_result res;
		wl_err err;
		char c;
		close(gate[1]);
		while (read(gate[0], &c, 1) > 0)
			;
		opts_for(&o, clips, out, cal);
		o.shard_index = k;
		o.shard_count = n;
		wl_err_clear(&err);
		if (wl_batch_run(&o, &res, &err) != WL_OK) {
			fprintf(stderr, "shard %d/%d: %s\n", k, n, err.msg);
			_exit(1);
		}
		if (res.failed || res.done != res.clips) {
			fprintf(stderr, "shard %d/%d: %zu of %zu clips failed\n", k, n, res.failed,
			        res.clips);
			_exit(1);
		}
		_exit(0);
	}
	return pid;
}

static void test_shards_at_once(void **state)
{
	char clips[300], out[300], cal[300], rel[64];
	int round, k, failures = 0;
	wl_batch_result res;
	wl_err err;
	(void)state;
	snprintf(clips, sizeof clips, "%s/race/clips", root);
	snprintf(cal, sizeof cal, "%s/race/cal.json", root);
	mkfile("race/cal.json", "{}\n");
	for (k = 0; k < 6; k++) {
		snprintf(rel, sizeof rel, "race/clips/c%d.mp4", k);
		mkfile(rel, k == 5 ? "2.5" : "1.5");
	}
	for (round = 0; round < 50; round++) {
		int gate[2];
		pid_t pids[3];
		snprintf(out, sizeof out, "%s/race/out%d", root, round);
		assert_int_equal(pipe(gate), 0);
		for (k = 0; k < 3; k++)
			pids[k] = start_shard(clips, out, cal, k, 3, gate);
		close(gate[0]);
		close(gate[1]); /* all three start now */
		for (k = 0; k < 3; k++) {
			int st = 0;
			assert_true(pids[k] > 0);
			assert_int_equal(waitpid(pids[k], &st, 0), pids[k]);
			if (!WIFEXITED(st) || WEXITSTATUS(st) != 0) {
				failures++;
				fprintf(stderr, "round %d: shard %d failed\n", round, k);
			}
		}
	}
	printf("50 rounds of 3 shards at once: %d shard failures\n", failures);
	assert_int_equal(failures, 0);
	/* and the last round merges into all six clips */
	assert_int_equal(wl_batch_merge(out, NULL, &res, &err), WL_OK);
	assert_int_equal(res.runs, 6);
	assert_int_equal(res.failed + res.missing, 0);
}

/* The CPUs a process may use follow its affinity mask and Slurm's
 * allocation, not the machine (a child narrows its own mask). */
static void test_cpus(void **state)
{
	pid_t pid;
	int st = 0;
	(void)state;
	unsetenv("SLURM_CPUS_PER_TASK");
	assert_true(wl_batch_cpus() >= 1);
	pid = fork();
	if (pid == 0) {
		cpu_set_t one;
		int ok = 1, all = wl_batch_cpus();
		CPU_ZERO(&one);
		CPU_SET(0, &one);
		if (sched_setaffinity(0, sizeof one, &one) != 0)
			_exit(2);
		ok &= wl_batch_cpus() == 1;
		/* more CPUs in the environment than in the mask: the mask wins */
		setenv("SLURM_CPUS_PER_TASK", "8", 1);
		ok &= wl_batch_cpus() == 1;
		_exit(ok && all >= 1 ? 0 : 1);
	}
	assert_int_equal(waitpid(pid, &st, 0), pid);
	assert_true(WIFEXITED(st));
	assert_int_equal(WEXITSTATUS(st), 0);
	/* fewer in the environment (Slurm without task binding): those */
	setenv("SLURM_CPUS_PER_TASK", "1", 1);
	assert_int_equal(wl_batch_cpus(), 1);
	setenv("SLURM_CPUS_PER_TASK", "junk", 1);
	assert_true(wl_batch_cpus() >= 1);
	unsetenv("SLURM_CPUS_PER_TASK");
}

/* Locks: flock refuses a second run of the same shard and names the lock;
 * the lock directory (file systems without flock) refuses a live owner,
 * names it, takes over one left by a dead run on this host, and is gone
 * after the run; --lock none runs beside a held lock. */
static void test_locks(void **state)
{
	char clips[300], out[300], cal[300], path[400], host[256] = "", text[400];
	wl_batch_opts o;
	wl_batch_result res;
	wl_err err;
	int fd;
	(void)state;
	snprintf(clips, sizeof clips, "%s/lock/clips", root);
	snprintf(out, sizeof out, "%s/lock/out", root);
	snprintf(cal, sizeof cal, "%s/lock/cal.json", root);
	mkfile("lock/cal.json", "{}\n");
	mkfile("lock/clips/a.mp4", "1.5");
	mkfile("lock/clips/b.mp4", "2.5");
	opts_for(&o, clips, out, cal);
	o.shard_index = 1;
	o.shard_count = 2;
	assert_int_equal(wl_batch_run(&o, &res, &err), WL_OK);
	/* flock held by someone else */
	snprintf(path, sizeof path, "%s/.lock-1", out);
	fd = open(path, O_RDWR);
	assert_true(fd >= 0);
	assert_int_equal(flock(fd, LOCK_EX), 0);
	assert_int_equal(wl_batch_run(&o, &res, &err), WL_EINVAL);
	assert_non_null(strstr(err.msg, "another batch is writing into"));
	assert_non_null(strstr(err.msg, ".lock-1"));
	/* shard 0 has a lock of its own */
	o.shard_index = 0;
	assert_int_equal(wl_batch_run(&o, &res, &err), WL_OK);
	o.shard_index = 1;
	o.lock = WL_BATCH_LOCK_NONE;
	assert_int_equal(wl_batch_run(&o, &res, &err), WL_OK);
	close(fd);

	/* the lock directory */
	o.lock = WL_BATCH_LOCK_DIR;
	gethostname(host, sizeof host - 1);
	snprintf(path, sizeof path, "%s/.lock-1.d", out);
	assert_int_equal(mkdir(path, 0755), 0);
	snprintf(text, sizeof text, "other-node 4242 2026-01-01T00:00:00Z\n");
	snprintf(path, sizeof path, "%s/.lock-1.d/owner", out);
	assert_int_equal(wl_write_file_atomic(path, text, strlen(text), NULL), WL_OK);
	assert_int_equal(wl_batch_run(&o, &res, &err), WL_EINVAL);
	assert_non_null(strstr(err.msg, "host other-node pid 4242 since 2026-01-01T00:00:00Z"));
	assert_non_null(strstr(err.msg, "remove that directory"));
	/* a live pid on this host: refused too */
	snprintf(text, sizeof text, "%s %ld 2026-01-01T00:00:00Z\n", host, (long)getppid());
	assert_int_equal(wl_write_file_atomic(path, text, strlen(text), NULL), WL_OK);
	assert_int_equal(wl_batch_run(&o, &res, &err), WL_EINVAL);
	/* a dead pid on this host: taken over; and released after the run */
	{
		pid_t dead = fork();
		if (dead == 0)
			_exit(0);
		waitpid(dead, NULL, 0);
		snprintf(text, sizeof text, "%s %ld 2026-01-01T00:00:00Z\n", host, (long)dead);
	}
	assert_int_equal(wl_write_file_atomic(path, text, strlen(text), NULL), WL_OK);
	assert_int_equal(wl_batch_run(&o, &res, &err), WL_OK);
	snprintf(path, sizeof path, "%s/.lock-1.d", out);
	assert_int_equal(access(path, F_OK), -1);
}

/* Paths stored in OUT are relative to it. */
static void test_relpath(void **state)
{
	const char *cases[][3] = {
	        {"/a/b", "/a/b/c/d", "c/d"},
	        {"/a/b", "/a/x/y", "../x/y"},
	        {"/a/b", "/a/b", "."},
	        {"/", "/x/y", "x/y"},
	        {"/a/b/c", "/", "../../.."},
	        {"/scratch/out", "/home/u/clips/a.mp4", "../../home/u/clips/a.mp4"},
	        {"/a/bc", "/a/b/x", "../b/x"},
	};
	char out[256];
	size_t i;
	(void)state;
	for (i = 0; i < sizeof cases / sizeof cases[0]; i++) {
		batch_relpath(cases[i][0], cases[i][1], out, sizeof out);
		assert_string_equal(out, cases[i][2]);
	}
	assert_int_equal(batch_abspath("/x/./y/../z//w", out, sizeof out), 0);
	assert_string_equal(out, "/x/z/w");
}

/* A shard whose CAL.json differs from the sweep's is refused with a
 * message that says what to do; --force and per-clip calibrations pass;
 * nothing under OUT names a folder of this machine. */
static void test_cal_check(void **state)
{
	char clips[300], out[300], cal[300], cal2[300], man[300], cmd[900];
	wl_batch_opts o;
	wl_batch_result res;
	wl_err err;
	FILE *p;
	int hits = -1;
	(void)state;
	snprintf(clips, sizeof clips, "%s/cal/clips", root);
	snprintf(out, sizeof out, "%s/cal/out", root);
	snprintf(cal, sizeof cal, "%s/cal/cal.json", root);
	snprintf(cal2, sizeof cal2, "%s/cal/other.json", root);
	snprintf(man, sizeof man, "%s/cal/m.csv", root);
	mkfile("cal/cal.json", "{\"v\": 1}\n");
	mkfile("cal/other.json", "{\"v\": 2}\n");
	mkfile("cal/clips/a.mp4", "1.5");
	mkfile("cal/clips/b.mp4", "2.5");
	mkfile("cal/clips/c.mp4", "3.5");
	opts_for(&o, clips, out, cal);
	o.shard_count = 3;
	assert_int_equal(wl_batch_run(&o, &res, &err), WL_OK);
	o.shard_index = 1;
	o.cal_path = cal2;
	assert_int_equal(wl_batch_run(&o, &res, &err), WL_EINVAL);
	assert_non_null(strstr(err.msg, "shard 1/3: the calibration"));
	assert_non_null(strstr(err.msg, "give every shard the same CAL.json"));
	o.cal_path = cal;
	assert_int_equal(wl_batch_run(&o, &res, &err), WL_OK);
	/* the sweep's record was written by shard 1 with the same calibration;
	 * shard 0's record disagrees with another calibration for shard 2 */
	o.shard_index = 2;
	o.cal_path = cal2;
	assert_int_equal(wl_batch_run(&o, &res, &err), WL_EINVAL);
	o.force = 1;
	assert_int_equal(wl_batch_run(&o, &res, &err), WL_OK);
	o.force = 0;
	/* a manifest with a cal column assigns calibrations per clip */
	mkfile("cal/m.csv", "clip,cal\na.mp4,cal.json\nb.mp4,other.json\nc.mp4,cal.json\n");
	o.manifest_path = man;
	o.shard_index = 0;
	o.cal_path = cal;
	assert_int_equal(wl_batch_run(&o, &res, &err), WL_OK);
	o.shard_index = 1;
	o.cal_path = cal2;
	assert_int_equal(wl_batch_run(&o, &res, &err), WL_OK);
	/* no absolute path of this machine in what OUT holds */
	snprintf(cmd, sizeof cmd, "grep -rl '%s' '%s' | wc -l", root, out);
	p = popen(cmd, "r");
	assert_non_null(p);
	assert_int_equal(fscanf(p, "%d", &hits), 1);
	pclose(p);
	assert_int_equal(hits, 0);
}

/* batch --status: done and failed from the markers, running while the
 * shard's lock is held, interrupted when it is not, not started without a
 * journal line, and the manifest's missing clips. */
static void test_status(void **state)
{
	char clips[300], out[300], cal[300], man[300], path[400], line[200];
	wl_batch_opts o;
	wl_batch_result res;
	wl_batch_status_report st;
	wl_err err;
	size_t i;
	int fd;
	(void)state;
	snprintf(clips, sizeof clips, "%s/st/clips", root);
	snprintf(out, sizeof out, "%s/st/out", root);
	snprintf(cal, sizeof cal, "%s/st/cal.json", root);
	snprintf(man, sizeof man, "%s/st/m.csv", root);
	mkfile("st/cal.json", "{}\n");
	mkfile("st/clips/a.mp4", "1.5");
	mkfile("st/clips/b.mp4", "2.5");
	mkfile("st/clips/c.mp4", "FAIL");
	mkfile("st/clips/d.mp4", "3.5");
	mkfile("st/m.csv", "clip,gain\na.mp4,1\nb.mp4,2\nc.mp4,3\nd.mp4,4\ngone.mp4,5\n");
	opts_for(&o, clips, out, cal);
	o.manifest_path = man;
	o.shard_count = 2;
	/* shard 0: a.mp4 (ok) and c.mp4 (failed) */
	assert_int_equal(wl_batch_run(&o, &res, &err), WL_OK);
	/* shard 1 started b.mp4 and holds its lock; d.mp4 not yet */
	snprintf(path, sizeof path, "%s/journal-1.log", out);
	snprintf(line, sizeof line, "2026-01-01T00:00:00Z\tstart\tb.mp4\t0\t\n");
	assert_int_equal(wl_write_file_atomic(path, line, strlen(line), NULL), WL_OK);
	snprintf(path, sizeof path, "%s/.lock-1", out);
	fd = open(path, O_RDWR | O_CREAT, 0644);
	assert_true(fd >= 0);
	assert_int_equal(flock(fd, LOCK_EX), 0);
	assert_int_equal(wl_batch_status(out, &st, &err), WL_OK);
	assert_int_equal(st.shard_count, 2);
	assert_int_equal(st.n, 5);
	assert_int_equal(st.count[WL_BATCH_DONE], 1);
	assert_int_equal(st.count[WL_BATCH_FAILED], 1);
	assert_int_equal(st.count[WL_BATCH_RUNNING], 1);
	assert_int_equal(st.count[WL_BATCH_NOT_STARTED], 1);
	assert_int_equal(st.count[WL_BATCH_MISSING], 1);
	assert_true(st.shard_running[1] && !st.shard_running[0]);
	for (i = 0; i < st.n; i++) {
		if (strcmp(st.e[i].clip, "b.mp4") == 0)
			assert_int_equal(st.e[i].state, WL_BATCH_RUNNING);
		if (strcmp(st.e[i].clip, "c.mp4") == 0) {
			assert_int_equal(st.e[i].state, WL_BATCH_FAILED);
			assert_non_null(strstr(st.e[i].msg, "frame 3: invalid data"));
		}
		if (strcmp(st.e[i].clip, "gone.mp4") == 0)
			assert_non_null(strstr(st.e[i].msg, "m.csv:6"));
	}
	wl_batch_status_release(&st);
	/* the shard died: its started clip is interrupted */
	close(fd);
	assert_int_equal(wl_batch_status(out, &st, &err), WL_OK);
	assert_int_equal(st.count[WL_BATCH_RUNNING], 0);
	assert_int_equal(st.count[WL_BATCH_INTERRUPTED], 1);
	wl_batch_status_release(&st);
	/* shard 1 runs: every clip but the failed one is done */
	o.shard_index = 1;
	assert_int_equal(wl_batch_run(&o, &res, &err), WL_OK);
	assert_int_equal(wl_batch_status(out, &st, &err), WL_OK);
	assert_int_equal(st.count[WL_BATCH_DONE], 3);
	assert_int_equal(st.count[WL_BATCH_INTERRUPTED] + st.count[WL_BATCH_RUNNING], 0);
	wl_batch_status_release(&st);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
	        cmocka_unit_test(test_cpus),    cmocka_unit_test(test_locks),
	        cmocka_unit_test(test_relpath), cmocka_unit_test(test_cal_check),
	        cmocka_unit_test(test_status),  cmocka_unit_test(test_shards_at_once),
	};
	return cmocka_run_group_tests(tests, setup, teardown);
}
