/*
 * test_batch.c: the batch machinery: clip discovery order, manifest errors
 * with line numbers, the resume rule (skip, input touched, settings
 * changed, --force), failure isolation (an error and a crash in one clip
 * leave the others done), SIGKILL of the batch in the middle and a rerun
 * that finishes without redoing finished clips, and merge from the clip
 * folders alone.
 *
 * The clip function here is a test double that writes small but valid
 * clean.csv / summary.json files (an invented circling run) and the real
 * plots; it tests the runner, not the processing.
 */
#define _GNU_SOURCE
#include <dirent.h>
#include <fcntl.h>
#include <math.h>
#include <setjmp.h>
#include <signal.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/file.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <time.h>
#include <unistd.h>

#include <cmocka.h>

#include "batch/batch.h"
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
	snprintf(root, sizeof root, "/tmp/wl_test_batch_XXXXXX");
	return mkdtemp(root) ? 0 : -1;
}

static int teardown(void **state)
{
	char cmd[400];
	(void)state;
	snprintf(cmd, sizeof cmd, "rm -rf '%s'", root);
	return system(cmd) == 0 ? 0 : -1;
}

/* ---- discovery ---- */

static void test_discovery_order(void **state)
{
	wl_cliplist l;
	wl_err err;
	char dir[300], name[300];
	const char *want[] = {"Y.AVI", "a.mov", "b.MP4", "sub/c.mkv", "sub/deeper/e.m4v", "z.webm"};
	size_t i;
	(void)state;
	mkfile("disc/b.MP4", "x");
	mkfile("disc/a.mov", "x");
	mkfile("disc/z.webm", "x");
	mkfile("disc/Y.AVI", "x");
	mkfile("disc/sub/c.mkv", "x");
	mkfile("disc/sub/deeper/e.m4v", "x");
	mkfile("disc/notes.txt", "x");
	mkfile("disc/.hidden.mp4", "x");
	mkfile("disc/sub/.cache/d.mp4", "x");
	mkfile("disc/out/clips/old.mp4", "x");
	snprintf(dir, sizeof dir, "%s/disc", root);
	snprintf(name, sizeof name, "%s/disc/out", root);
	assert_int_equal(wl_batch_discover(dir, name, &l, &err), WL_OK);
	assert_int_equal(l.n, 6);
	for (i = 0; i < 6; i++)
		assert_string_equal(l.rel[i], want[i]);
	wl_cliplist_release(&l);
	assert_true(wl_batch_is_video("x.Mp4") && wl_batch_is_video("a.b.webm"));
	assert_false(wl_batch_is_video("mp4") || wl_batch_is_video("x.mp4.txt") || wl_batch_is_video(".mp4"));
	assert_string_equal(wl_batch_clip_name("sub/deeper/e.m4v", name, sizeof name), "sub__deeper__e_m4v");
	assert_string_equal(wl_batch_clip_name("v.1/noext", name, sizeof name), "v.1__noext");
	snprintf(dir, sizeof dir, "%s/none", root);
	assert_int_equal(wl_batch_discover(dir, NULL, &l, &err), WL_EIO);
	assert_non_null(strstr(err.msg, "none"));
}

/* ---- manifest ---- */

static void manifest_error(const char *text, const char *want1, const char *want2)
{
	wl_manifest m;
	wl_err err;
	char path[400];
	mkfile("m/bad.csv", text);
	snprintf(path, sizeof path, "%s/m/bad.csv", root);
	assert_int_equal(wl_manifest_load(path, &m, &err), WL_EFORMAT);
	if (!strstr(err.msg, want1) || (want2 && !strstr(err.msg, want2)))
		fail_msg("message '%s' lacks '%s' / '%s'", err.msg, want1, want2 ? want2 : "");
}

static void test_manifest(void **state)
{
	wl_manifest m;
	wl_err err;
	char path[400];
	const wl_manifest_row *r;
	(void)state;
	mkfile("m/ok.csv",
	       "clip,gain,cal,plane_height_m\n./a.mp4,0.5,cal2.json,0.02\n# a comment\nsub/b.mp4,1,,\n");
	snprintf(path, sizeof path, "%s/m/ok.csv", root);
	assert_int_equal(wl_manifest_load(path, &m, &err), WL_OK);
	assert_int_equal(m.nrows, 2);
	assert_int_equal(m.c_clip, 0);
	r = wl_manifest_find(&m, "a.mp4");
	assert_non_null(r);
	assert_int_equal(r->line, 2);
	assert_string_equal(r->values[1], "0.5");
	/* option columns: paths relative to the manifest's folder, numbers read */
	assert_non_null(r->opts.cal);
	assert_non_null(strstr(r->opts.cal, "/m/cal2.json"));
	assert_true(fabs(r->opts.plane_height_m - 0.02) < 1e-15);
	assert_int_equal(r->opts.mode, WL_MF_MODE_UNSET);
	r = wl_manifest_find(&m, "sub/b.mp4");
	assert_non_null(r);
	assert_int_equal(r->line, 4);
	assert_null(r->opts.cal);
	assert_true(isnan(r->opts.plane_height_m));
	wl_manifest_release(&m);

	manifest_error("file,gain\na.mp4,1\n", "bad.csv:1:", "no 'clip' column");
	manifest_error("clip,gain\na.mp4,1\nb.mp4,2\na.mp4,3\n", "bad.csv:4:", "first on line 2");
	manifest_error("clip,gain\na.mp4,1\nb.mp4\n", "bad.csv:3:", "1 cells but the header has 2");
	manifest_error("clip,plane_height_m\na.mp4,abc\n", "bad.csv:2", "plane_height_m");
	manifest_error("clip,gain\n,1\n", "bad.csv:2:", "empty 'clip'");
	manifest_error("clip,mode\na.mp4,colr\n", "bad.csv:2:", "column 'mode': 'colr' is not tag or colour");
	manifest_error("clip,trim\na.mp4,soon\n", "bad.csv:2:", "column 'trim'");
	manifest_error("clip,body_diameter_m\na.mp4,-0.1\n", "bad.csv:2:", "a number > 0");
	manifest_error("clip,gain,gain\n", "bad.csv:1:", "'gain' appears twice");
	manifest_error("", "bad.csv:1:", "empty manifest");
}

/* ---- the runner ---- */

/* Appends the clip's name to calls.log: how often each clip ran. */
static void note_call(const char *rel)
{
	char path[400], line[300];
	int fd, n;
	snprintf(path, sizeof path, "%s/calls.log", root);
	fd = open(path, O_WRONLY | O_APPEND | O_CREAT, 0644);
	n = snprintf(line, sizeof line, "%s\n", rel);
	if (fd >= 0) {
		if (write(fd, line, (size_t)n) < 0) {
		}
		close(fd);
	}
}

static int count_calls(const char *rel)
{
	char path[400], line[300];
	int n = 0;
	FILE *fp;
	snprintf(path, sizeof path, "%s/calls.log", root);
	fp = fopen(path, "r");
	if (!fp)
		return 0;
	while (fgets(line, sizeof line, fp)) {
		line[strcspn(line, "\n")] = '\0';
		n += strcmp(line, rel) == 0;
	}
	fclose(fp);
	return n;
}

static wl_status put(const char *dir, const char *name, const char *text, wl_err *err)
{
	char path[4200];
	snprintf(path, sizeof path, "%s/%s", dir, name);
	return wl_write_file_atomic(path, text, strlen(text), err);
}

/* The clip's content steers the double: FAIL, CRASH, SLOW, else fine. */
static wl_status fake_clip(const wl_batch_job *job, void *ctx, wl_err *err)
{
	char *content = NULL, buf[256];
	size_t len = 0, i;
	wl_status s;
	FILE *fp;
	char path[4200];
	(void)ctx;
	note_call(job->clip_rel);
	if ((s = wl_read_file(job->clip_path, 4096, &content, &len, err)))
		return s;
	if (strncmp(content, "FAIL", 4) == 0) {
		free(content);
		return wl_err_set(
		        err, WL_EDECODE,
		        "%s: frame 12: invalid data found when processing input: re-encode the clip",
		        job->clip_path);
	}
	if (strncmp(content, "CRASH", 5) == 0)
		abort();
	for (i = 0; i < 5; i++) {
		if (strncmp(content, "SLOW", 4) == 0)
			usleep(80000);
		wl_diag_progress(job->diag, "track", (double)(i + 1) * 100, 500, NAN);
	}
	free(content);
	if ((s = put(job->out_dir, "raw.csv",
	             "t_s,frame,id,u_px,v_px,x_m,y_m,heading_rad,status,margin,size_px,heading_source\n",
	             err)) ||
	    (s = put(job->out_dir, "clean.json", "{}\n", err)))
		return s;
	snprintf(path, sizeof path, "%s/clean.csv", job->out_dir);
	fp = fopen(path, "w");
	if (!fp)
		return wl_err_set(err, WL_EIO, "cannot write '%s'", path);
	fprintf(fp, "t_s,frame,id,x_m,y_m,heading_rad,speed_mps,yaw_rate_radps,vx_mps,vy_mps,segment,status,"
	            "cut\n");
	for (i = 0; i < 60; i++) {
		double a = 0.1 * (double)i;
		fprintf(fp, "%.3f,%zu,1,%.4f,%.4f,%.4f,0.1,0.5,0,0,0,measured,\n", a, i, 0.5 * cos(a),
		        0.5 * sin(a), a + 1.5707963);
	}
	fclose(fp);
	snprintf(buf, sizeof buf,
	         "{\"format\":\"wakeline "
	         "summary\",\"runs\":[{\"id\":1,\"segment\":0,\"headline\":true,\"radius_m\":0.5,\"curvature_"
	         "per_m\":%"
	         "s,"
	         "\"curvature_ci95_per_m\":[1.9,2.1],\"straight\":false,\"centre_x_m\":0,\"centre_y_m\":0}]}"
	         "\n",
	         job->nparams && job->param_values[0][0] ? job->param_values[0] : "2");
	if ((s = put(job->out_dir, "summary.json", buf, err)))
		return s;
	return wl_report_clip_plots(job->out_dir, NULL, err);
}

static const char *const OUTPUTS[] = {"raw.csv",      "clean.csv",   "clean.json",
                                      "summary.json", "path_m.svg",  "path_m.png",
                                      "heading.svg",  "heading.png", NULL};

static void opts_for(wl_batch_opts *o, const char *clips, const char *out, const char *cal,
                     const char *manifest)
{
	memset(o, 0, sizeof *o);
	o->clip_dir = clips;
	o->out_dir = out;
	o->cal_path = cal;
	o->manifest_path = manifest;
	o->jobs = 2;
	o->settings = "test settings v1";
	o->outputs = OUTPUTS;
	o->fn = fake_clip;
}

typedef struct {
	int fails, dones, skips, warns;
	char last_fail[600];
} evcount;

static void on_warn(void *ctx, const char *stage, const char *msg)
{
	evcount *c = ctx;
	(void)msg;
	assert_string_equal(stage, "batch");
	c->warns++;
}

static void on_ev(const wl_batch_event *ev, void *ctx)
{
	evcount *c = ctx;
	if (ev->kind == WL_BATCH_EV_FAIL) {
		c->fails++;
		snprintf(c->last_fail, sizeof c->last_fail, "%s", ev->msg);
	}
	c->dones += ev->kind == WL_BATCH_EV_DONE;
	c->skips += ev->kind == WL_BATCH_EV_SKIP;
	assert_true(ev->finished <= ev->total);
}

typedef struct {
	int rows;
	int ok, failed, missing;
	char err_of_fail[600];
	char gain_of_a[64];
} sumcount;

static wl_status on_sum(const wl_csv_row *row, void *ctx, wl_err *err)
{
	sumcount *c = ctx;
	(void)err;
	if (row->index == 0)
		return WL_OK;
	c->rows++;
	c->ok += strcmp(row->fields[2], "ok") == 0;
	c->missing += strcmp(row->fields[2], "missing") == 0;
	if (strcmp(row->fields[2], "failed") == 0) {
		c->failed++;
		snprintf(c->err_of_fail, sizeof c->err_of_fail, "%s", row->fields[3]);
	}
	if (strcmp(row->fields[0], "a.mp4") == 0 && row->nfields > 4)
		snprintf(c->gain_of_a, sizeof c->gain_of_a, "%s", row->fields[4]);
	return WL_OK;
}

static void read_summary(const char *out, sumcount *c)
{
	char path[400];
	wl_err err;
	memset(c, 0, sizeof *c);
	snprintf(path, sizeof path, "%s/summary.csv", out);
	assert_int_equal(wl_csv_read(path, on_sum, c, &err), WL_OK);
}

static int tmp_files_under(const char *dir)
{
	char cmd[600];
	FILE *p;
	int n = 0;
	snprintf(cmd, sizeof cmd, "find '%s' -name '.*.tmp-*' | wc -l", dir);
	p = popen(cmd, "r");
	if (!p || fscanf(p, "%d", &n) != 1)
		n = -1;
	if (p)
		pclose(p);
	return n;
}

static void test_run_resume_and_failures(void **state)
{
	char clips[300], out[300], cal[300], man[300], path[400];
	wl_batch_opts o;
	wl_batch_result res;
	evcount ev;
	sumcount sc;
	wl_err err;
	struct timespec ts[2];
	(void)state;
	snprintf(clips, sizeof clips, "%s/r/clips", root);
	snprintf(out, sizeof out, "%s/r/out", root);
	snprintf(cal, sizeof cal, "%s/r/cal.json", root);
	snprintf(man, sizeof man, "%s/r/manifest.csv", root);
	mkfile("r/clips/a.mp4", "fine");
	mkfile("r/clips/b.mp4", "FAIL");
	mkfile("r/clips/c.mp4", "fine");
	mkfile("r/clips/d.mp4", "CRASH");
	mkfile("r/clips/e.mp4", "fine"); /* no manifest row */
	mkfile("r/cal.json", "{\"v\":1}\n");
	mkfile("r/manifest.csv", "clip,gain\na.mp4,1.5\nb.mp4,2\nc.mp4,2.5\nd.mp4,3\ngone.mp4,4\n");
	opts_for(&o, clips, out, cal, man);
	memset(&ev, 0, sizeof ev);
	o.on_event = on_ev;
	o.ev_ctx = &ev;
	o.diag = &(wl_diag){on_warn, NULL, &ev};
	o.sweep.x_col = "gain";
	assert_int_equal(wl_batch_run(&o, &res, &err), WL_OK);
	assert_int_equal(res.clips, 5);
	assert_int_equal(res.done, 3);
	assert_int_equal(res.failed, 2);
	assert_int_equal(res.missing, 1);
	assert_int_equal(res.unlisted, 1);
	assert_int_equal(res.runs, 3);
	assert_int_equal(ev.warns, 2);
	read_summary(out, &sc);
	assert_int_equal(sc.rows, 6);
	assert_int_equal(sc.ok, 3);
	assert_int_equal(sc.failed, 2);
	assert_int_equal(sc.missing, 1);
	assert_string_equal(sc.gain_of_a, "1.5");
	/* the crash is last of the failures in clip order: d.mp4 */
	assert_non_null(strstr(sc.err_of_fail, "signal 6"));
	snprintf(path, sizeof path, "%s/clips/b_mp4/clip.json", out);
	{
		cJSON *j = NULL;
		assert_int_equal(wl_json_load(path, &j, &err), WL_OK);
		assert_string_equal(wl_json_string_or(j, "status", ""), "failed");
		assert_non_null(strstr(wl_json_string_or(j, "error", ""), "frame 12: invalid data"));
		cJSON_Delete(j);
	}
	{
		char *html = NULL;
		size_t len;
		snprintf(path, sizeof path, "%s/report.html", out);
		assert_int_equal(wl_read_file(path, 1 << 24, &html, &len, NULL), WL_OK);
		assert_non_null(strstr(html, "manifest.csv:6: clip &#39;gone.mp4&#39;"));
		assert_non_null(strstr(html, "sweep_curvature.svg"));
		free(html);
		snprintf(path, sizeof path, "%s/sweep_radius.png", out);
		assert_true(access(path, R_OK) == 0);
	}
	assert_int_equal(count_calls("a.mp4"), 1);

	/* rerun: the good clips are skipped, the failed ones tried again */
	memset(&ev, 0, sizeof ev);
	assert_int_equal(wl_batch_run(&o, &res, &err), WL_OK);
	assert_int_equal(res.skipped, 3);
	assert_int_equal(res.failed, 2);
	assert_int_equal(count_calls("a.mp4"), 1);
	assert_int_equal(count_calls("b.mp4"), 2);

	/* a changed manifest cell does not redo the clip but shows in the table */
	mkfile("r/manifest.csv", "clip,gain\na.mp4,1.75\nb.mp4,2\nc.mp4,2.5\nd.mp4,3\n");
	assert_int_equal(wl_batch_run(&o, &res, &err), WL_OK);
	assert_int_equal(res.skipped, 3);
	assert_int_equal(res.missing, 0);
	assert_int_equal(count_calls("a.mp4"), 1);
	read_summary(out, &sc);
	assert_string_equal(sc.gain_of_a, "1.75");

	/* a touched input (new times, same bytes, as a copy to node scratch
	 * without its times gives) is not redone ... */
	snprintf(path, sizeof path, "%s/c.mp4", clips);
	clock_gettime(CLOCK_REALTIME, &ts[0]);
	ts[0].tv_sec += 100; /* newer than every output */
	ts[1] = ts[0];
	assert_int_equal(utimensat(AT_FDCWD, path, ts, 0), 0);
	assert_int_equal(wl_batch_run(&o, &res, &err), WL_OK);
	assert_int_equal(res.skipped, 3);
	assert_int_equal(count_calls("c.mp4"), 1);
	/* ... but new content of the same size is, and only that clip */
	mkfile("r/clips/c.mp4", "FINE");
	assert_int_equal(wl_batch_run(&o, &res, &err), WL_OK);
	assert_int_equal(res.skipped, 2);
	assert_int_equal(count_calls("c.mp4"), 2);
	assert_int_equal(count_calls("a.mp4"), 1);
	/* the digest samples head, middle and tail of a large file: a change in
	 * the middle block is seen, and the whole-file size always */
	{
		char big[300], d1[65], d2[65], d3[65];
		long long n1, n2, n3;
		FILE *fp;
		long k;
		snprintf(big, sizeof big, "%s/r/big.bin", root);
		fp = fopen(big, "wb");
		assert_non_null(fp);
		for (k = 0; k < 1000000; k++)
			fputc((int)(k * 7 % 251), fp);
		fclose(fp);
		assert_int_equal(wl_batch_input_digest(big, d1, &n1, &err), WL_OK);
		assert_int_equal(n1, 1000000);
		fp = fopen(big, "r+b");
		fseek(fp, 500000, SEEK_SET);
		fputc('X', fp);
		fclose(fp);
		assert_int_equal(wl_batch_input_digest(big, d2, &n2, &err), WL_OK);
		assert_string_not_equal(d1, d2);
		fp = fopen(big, "ab");
		fputc('Y', fp);
		fclose(fp);
		assert_int_equal(wl_batch_input_digest(big, d3, &n3, &err), WL_OK);
		assert_int_equal(n3, 1000001);
		assert_string_not_equal(d2, d3);
	}

	/* changed calibration bytes redo everything; so does force */
	mkfile("r/cal.json", "{\"v\":2}\n");
	assert_int_equal(wl_batch_run(&o, &res, &err), WL_OK);
	assert_int_equal(res.skipped, 0);
	assert_int_equal(count_calls("a.mp4"), 2);
	o.force = 1;
	assert_int_equal(wl_batch_run(&o, &res, &err), WL_OK);
	assert_int_equal(res.skipped, 0);
	assert_int_equal(count_calls("a.mp4"), 3);
	o.force = 0;
	/* a removed output makes the clip incomplete */
	snprintf(path, sizeof path, "%s/clips/e_mp4/heading.png", out);
	assert_int_equal(unlink(path), 0);
	assert_int_equal(wl_batch_run(&o, &res, &err), WL_OK);
	assert_int_equal(res.skipped, 2);
	assert_int_equal(count_calls("e.mp4"), 4);

	/* merge rebuilds the same summary.csv from the folders alone */
	{
		char *before = NULL, *after = NULL;
		size_t lb, la;
		snprintf(path, sizeof path, "%s/summary.csv", out);
		assert_int_equal(wl_read_file(path, 1 << 24, &before, &lb, NULL), WL_OK);
		unlink(path);
		assert_int_equal(wl_batch_merge(out, NULL, &res, &err), WL_OK);
		assert_int_equal(wl_read_file(path, 1 << 24, &after, &la, NULL), WL_OK);
		assert_int_equal(lb, la);
		assert_memory_equal(before, after, lb);
		assert_int_equal(res.runs, 3);
		assert_int_equal(res.failed, 2);
		free(before);
		free(after);
	}
	assert_int_equal(tmp_files_under(out), 0);
	/* a second batch on the same folder at the same time is refused */
	{
		char lock[400];
		int fd;
		snprintf(lock, sizeof lock, "%s/.lock-0", out);
		fd = open(lock, O_RDWR);
		assert_true(fd >= 0);
		assert_int_equal(flock(fd, LOCK_EX), 0);
		/* flock locks belong to the open file: another open is refused */
		assert_int_equal(wl_batch_run(&o, &res, &err), WL_EINVAL);
		assert_non_null(strstr(err.msg, "another batch"));
		close(fd);
	}
	/* a bad sweep column is an error naming it */
	o.sweep.x_col = "speed";
	assert_int_equal(wl_batch_run(&o, &res, &err), WL_EINVAL);
	assert_non_null(strstr(err.msg, "'speed'"));
}

/* SIGKILL of the whole batch while workers run, then a rerun. */
static void test_kill_and_resume(void **state)
{
	char clips[300], out[300], cal[300], rel[32], path[400];
	wl_batch_opts o;
	wl_batch_result res;
	wl_err err;
	pid_t pid;
	int i, done_before = 0, st;
	int done_flag[8] = {0};
	(void)state;
	snprintf(clips, sizeof clips, "%s/k/clips", root);
	snprintf(out, sizeof out, "%s/k/out", root);
	snprintf(cal, sizeof cal, "%s/k/cal.json", root);
	mkfile("k/cal.json", "{}\n");
	for (i = 0; i < 8; i++) {
		snprintf(rel, sizeof rel, "k/clips/s%d.mp4", i);
		mkfile(rel, "SLOW");
	}
	opts_for(&o, clips, out, cal, NULL);
	o.jobs = 2;
	pid = fork();
	assert_true(pid >= 0);
	if (pid == 0) {
		wl_batch_run(&o, &res, NULL);
		_exit(0);
	}
	/* wait for three clips to finish, then kill the batch outright */
	for (i = 0; i < 400 && done_before < 3; i++) {
		int k;
		usleep(20000);
		done_before = 0;
		for (k = 0; k < 8; k++) {
			snprintf(path, sizeof path, "%s/clips/s%d_mp4/clip.json", out, k);
			done_before += access(path, F_OK) == 0;
		}
	}
	kill(pid, SIGKILL);
	waitpid(pid, &st, 0);
	assert_true(WIFSIGNALED(st));
	usleep(100000); /* workers die with their parent (PR_SET_PDEATHSIG) */
	done_before = 0;
	for (i = 0; i < 8; i++) {
		snprintf(path, sizeof path, "%s/clips/s%d_mp4/clip.json", out, i);
		done_flag[i] = access(path, F_OK) == 0;
		done_before += done_flag[i];
		/* every marker that exists is complete JSON */
		if (done_flag[i]) {
			cJSON *j = NULL;
			assert_int_equal(wl_json_load(path, &j, &err), WL_OK);
			cJSON_Delete(j);
		}
	}
	assert_true(done_before >= 3 && done_before < 8);
	assert_int_equal(wl_batch_run(&o, &res, &err), WL_OK);
	assert_int_equal(res.skipped, (size_t)done_before);
	assert_int_equal(res.done, (size_t)(8 - done_before));
	assert_int_equal(res.failed, 0);
	assert_int_equal(res.runs, 8);
	for (i = 0; i < 8; i++) {
		snprintf(rel, sizeof rel, "s%d.mp4", i);
		/* finished clips ran once; interrupted ones at most twice */
		if (done_flag[i])
			assert_int_equal(count_calls(rel), 1);
		else
			assert_true(count_calls(rel) >= 1 && count_calls(rel) <= 2);
	}
	assert_int_equal(tmp_files_under(out), 0);
	{
		sumcount sc;
		read_summary(out, &sc);
		assert_int_equal(sc.ok, 8);
	}
}

int main(void)
{
	const struct CMUnitTest tests[] = {
	        cmocka_unit_test(test_discovery_order),
	        cmocka_unit_test(test_manifest),
	        cmocka_unit_test(test_run_resume_and_failures),
	        cmocka_unit_test(test_kill_and_resume),
	};
	int rc = cmocka_run_group_tests(tests, setup, teardown);
	wl_report_release_caches();
	return rc;
}
