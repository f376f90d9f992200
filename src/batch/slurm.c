/*
 * slurm.c: the job scripts of a sweep on Slurm and their submission (see
 * slurm.h and docs/cluster.md).
 */
#define _GNU_SOURCE
#include "batch/slurm.h"

#include <errno.h>
#include <fcntl.h>
#include <limits.h>
#include <signal.h>
#include <spawn.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <time.h>
#include <unistd.h>

#include "core/afile.h"
#include "wl_version.h"

extern char **environ;

/* A value that goes into an "#SBATCH --opt=VALUE" line as it is: letters,
 * digits and _ . : , + - only, so that no value can end the line or the
 * script. */
static wl_status check_value(const char *opt, const char *v, wl_err *err)
{
	const char *p;
	if (!v)
		return WL_OK;
	if (!v[0])
		return wl_err_set(err, WL_EINVAL, "--%s is empty: give a value or leave the option out", opt);
	for (p = v; *p; p++)
		if (!((*p >= 'a' && *p <= 'z') || (*p >= 'A' && *p <= 'Z') || (*p >= '0' && *p <= '9') ||
		      strchr("_.:,+-", *p)))
			return wl_err_set(err, WL_EINVAL,
			                  "--%s '%s': the character '%c' cannot go into an #SBATCH line: use "
			                  "letters, digits and _ . : , + - only",
			                  opt, v, *p);
	return WL_OK;
}

/* A word for bash, in single quotes ('\'' for a quote inside). */
static void put_word(FILE *fp, const char *w)
{
	fputc('\'', fp);
	for (; *w; w++) {
		if (*w == '\'')
			fputs("'\\''", fp);
		else
			fputc(*w, fp);
	}
	fputc('\'', fp);
}

/* The extra lines: "#SBATCH ..." lines, comments and blank lines only. */
static wl_status read_extra(const char *path, char **out, wl_err *err)
{
	char *text = NULL, *line, *save = NULL;
	size_t len = 0, cap, n = 0;
	long lineno = 0;
	wl_status s;
	*out = NULL;
	if (!path)
		return WL_OK;
	if ((s = wl_read_file(path, 1 << 20, &text, &len, err)))
		return s;
	cap = len + 2;
	*out = malloc(cap);
	if (!*out) {
		free(text);
		return wl_err_set(err, WL_ENOMEM, "out of memory reading '%s'", path);
	}
	(*out)[0] = '\0';
	for (line = strtok_r(text, "\n", &save); line; line = strtok_r(NULL, "\n", &save)) {
		size_t l = strlen(line);
		lineno++; /* strtok_r skips empty lines: numbers count the others */
		while (l && (line[l - 1] == '\r' || line[l - 1] == ' ' || line[l - 1] == '\t'))
			line[--l] = '\0';
		if (!l)
			continue;
		if (strncmp(line, "#SBATCH ", 8) != 0) {
			if (line[0] == '#' && strncmp(line, "#SBATCH", 7) != 0)
				continue; /* a comment */
			s = wl_err_set(
			        err, WL_EINVAL,
			        "%s: line '%s' is not an '#SBATCH --option' line: the file may hold only "
			        "those (and comments starting with '# ')",
			        path, line);
			free(text);
			free(*out);
			*out = NULL;
			return s;
		}
		n += (size_t)snprintf(*out + n, cap - n, "%s\n", line);
	}
	free(text);
	return WL_OK;
}

static void header(FILE *fp, const wl_slurm_opts *o, const char *what, const char *name, const char *log,
                   const char *limit, int cpus, const char *mem, int array, const char *extra)
{
	char utc[32];
	time_t t = time(NULL);
	struct tm tm;
	gmtime_r(&t, &tm);
	strftime(utc, sizeof utc, "%Y-%m-%dT%H:%M:%SZ", &tm);
	fprintf(fp, "#!/bin/bash\n");
	fprintf(fp, "# %s\n", what);
	fprintf(fp, "# Written by `wakeline batch --slurm` (wakeline %s) on %s.\n", WL_VERSION, utc);
	fprintf(fp, "#SBATCH --job-name=%s\n", name);
	if (array > 0)
		fprintf(fp, "#SBATCH --array=0-%d\n", array - 1);
	fprintf(fp, "#SBATCH --output=%s/slurm/logs/%s\n", o->out_dir, log);
	fprintf(fp, "#SBATCH --cpus-per-task=%d\n", cpus > 0 ? cpus : 1);
	if (limit)
		fprintf(fp, "#SBATCH --time=%s\n", limit);
	if (mem)
		fprintf(fp, "#SBATCH --mem=%s\n", mem);
	if (o->partition)
		fprintf(fp, "#SBATCH --partition=%s\n", o->partition);
	if (o->account)
		fprintf(fp, "#SBATCH --account=%s\n", o->account);
	if (extra && extra[0])
		fprintf(fp, "# extra lines from %s\n%s", o->extra_path, extra);
}

/* "exec 'PROGRAM' CMD 'ARG'..." without the line's end. */
static void put_exec(FILE *fp, const char *program, const char *cmd, const char *const *args, size_t n)
{
	size_t i;
	fputs("exec ", fp);
	put_word(fp, program);
	fprintf(fp, " %s", cmd);
	for (i = 0; i < n; i++) {
		fputc(' ', fp);
		put_word(fp, args[i]);
	}
}

/* Closes the memory stream fp (its text in *buf) and writes the text to
 * path, executable. */
static wl_status finish_script(FILE *fp, char **buf, const char *path, wl_err *err)
{
	wl_status s;
	if (fclose(fp) != 0)
		return wl_err_set(err, WL_ENOMEM, "out of memory writing the job scripts");
	s = wl_write_file_atomic(path, *buf, strlen(*buf), err);
	if (!s && chmod(path, 0755) != 0)
		return wl_err_set(err, WL_EIO, "cannot make '%s' executable: %s", path, strerror(errno));
	return s;
}

wl_status wl_slurm_write(const wl_slurm_opts *o, char *shard_script, char *merge_script, size_t cap,
                         wl_err *err)
{
	char dir[PATH_MAX], name[256];
	char *extra = NULL, *buf = NULL;
	size_t len = 0;
	FILE *fp = NULL;
	wl_status s;
	const char *prefix = o->job_name ? o->job_name : "wakeline";

	if (o->shards < 1)
		return wl_err_set(err, WL_EINVAL, "a job array needs 1 shard or more, not %d", o->shards);
	if ((s = check_value("partition", o->partition, err)) || (s = check_value("time", o->time, err)) ||
	    (s = check_value("merge-time", o->merge_time, err)) || (s = check_value("mem", o->mem, err)) ||
	    (s = check_value("account", o->account, err)) || (s = check_value("job name", prefix, err)))
		return s;
	if ((s = read_extra(o->extra_path, &extra, err)))
		return s;
	snprintf(dir, sizeof dir, "%s/slurm/logs", o->out_dir);
	if ((s = wl_mkdirs(dir, err)))
		goto out;

	/* the shards: a job array, one task per shard */
	fp = open_memstream(&buf, &len);
	if (!fp) {
		s = wl_err_set(err, WL_ENOMEM, "out of memory writing the job scripts");
		goto out;
	}
	snprintf(name, sizeof name, "%s-shards", prefix);
	header(fp, o,
	       "One task of the sweep's job array: task K runs shard K of the sweep in OUT/batch.json.", name,
	       "shard-%A_%a.out", o->time, o->cpus_per_task, o->mem, o->shards, extra);
	fprintf(fp, "#\n# Submit all tasks:      sbatch %s/slurm/shards.sbatch\n", o->out_dir);
	fprintf(fp, "# Run task K again:      sbatch --array=K %s/slurm/shards.sbatch\n", o->out_dir);
	fprintf(fp,
	        "# Then the merge:        sbatch --dependency=afterany:<that job id> %s/slurm/merge.sbatch\n",
	        o->out_dir);
	fprintf(fp, "set -eu\n");
	fprintf(fp, "# The shard count is fixed here, never taken from SLURM_ARRAY_TASK_COUNT:\n"
	            "# re-submitting one task with --array=K makes that count 1.\n");
	fprintf(fp, "SHARDS=%d\n", o->shards);
	fprintf(fp, "TASK=${SLURM_ARRAY_TASK_ID:?run this script as a task of a job array (sbatch "
	            "--array=...)}\n");
	fprintf(fp, "if [ \"$TASK\" -ge \"$SHARDS\" ]; then\n"
	            "\techo \"task $TASK: this sweep has $SHARDS shards (0 to $((SHARDS - 1)))\" >&2\n"
	            "\texit 2\nfi\n");
	put_exec(fp, o->program, "batch", o->batch_args, o->nbatch_args);
	fputs(" --shard \"$TASK/$SHARDS\"\n", fp);
	snprintf(shard_script, cap, "%s/slurm/shards.sbatch", o->out_dir);
	s = finish_script(fp, &buf, shard_script, err);
	fp = NULL;
	if (s)
		goto out;
	free(buf);
	buf = NULL;

	/* the merge, after every task has ended however it ended */
	fp = open_memstream(&buf, &len);
	if (!fp) {
		s = wl_err_set(err, WL_ENOMEM, "out of memory writing the job scripts");
		goto out;
	}
	snprintf(name, sizeof name, "%s-merge", prefix);
	header(fp, o,
	       "The sweep's merge: summary.csv and report.html from every shard's clips; it lists the "
	       "clips that failed or are missing and then exits 1.",
	       name, "merge-%j.out", o->merge_time ? o->merge_time : o->time, 1, NULL, 0, extra);
	/* a dependency that can never be met (the array's id unknown) cancels
	 * the merge instead of leaving it pending for ever */
	fprintf(fp, "#SBATCH --kill-on-invalid-dep=yes\n");
	fprintf(fp, "#\n# Submitted with --dependency=afterany:<the array's job id>, so that it runs\n"
	            "# when every task has ended, also when some failed (afterok would never run).\n");
	fprintf(fp, "set -eu\n");
	put_exec(fp, o->program, "merge", o->merge_args, o->nmerge_args);
	fputc('\n', fp);
	snprintf(merge_script, cap, "%s/slurm/merge.sbatch", o->out_dir);
	s = finish_script(fp, &buf, merge_script, err);
	fp = NULL;
out:
	if (fp)
		fclose(fp);
	free(buf);
	free(extra);
	return s;
}

wl_status wl_slurm_submit(const char *script, const char *dependency, char *jobid, size_t cap, wl_err *err)
{
	char dep[128], out[4096];
	char *argv[5];
	int p[2], n = 0, ws = 0;
	size_t len = 0;
	pid_t pid;
	posix_spawn_file_actions_t fa;
	ssize_t k;

	jobid[0] = '\0';
	argv[n++] = (char *)"sbatch";
	argv[n++] = (char *)"--parsable";
	if (dependency) {
		snprintf(dep, sizeof dep, "--dependency=%s", dependency);
		argv[n++] = dep;
	}
	argv[n++] = (char *)script;
	argv[n] = NULL;
	if (pipe2(p, O_CLOEXEC) != 0)
		return wl_err_set(err, WL_EIO, "cannot run sbatch: %s", strerror(errno));
	posix_spawn_file_actions_init(&fa);
	posix_spawn_file_actions_adddup2(&fa, p[1], STDOUT_FILENO);
	posix_spawn_file_actions_adddup2(&fa, p[1], STDERR_FILENO);
	errno = posix_spawnp(&pid, "sbatch", &fa, NULL, argv, environ);
	posix_spawn_file_actions_destroy(&fa);
	close(p[1]);
	if (errno) {
		int e = errno;
		close(p[0]);
		return wl_err_set(err, WL_EIO,
		                  "cannot run sbatch: %s: is this a Slurm login node (sbatch in PATH)? "
		                  "Use --dry-run to only write the scripts",
		                  strerror(e));
	}
	while ((k = read(p[0], out + len, sizeof out - 1 - len)) != 0) {
		if (k < 0 && errno == EINTR)
			continue;
		if (k < 0)
			break;
		len += (size_t)k;
		if (len == sizeof out - 1)
			break;
	}
	out[len] = '\0';
	close(p[0]);
	while (waitpid(pid, &ws, 0) < 0 && errno == EINTR)
		;
	if (!WIFEXITED(ws) || WEXITSTATUS(ws) != 0) {
		while (len && (out[len - 1] == '\n' || out[len - 1] == '\r'))
			out[--len] = '\0';
		return wl_err_set(err, WL_EIO, "sbatch %s failed: %s", script, out[0] ? out : "no message");
	}
	/* --parsable: "jobid" or "jobid;cluster" on the last line */
	{
		char *line = out, *nl;
		while ((nl = strchr(line, '\n')) && nl[1])
			line = nl + 1;
		line[strcspn(line, ";\n")] = '\0';
		if (!line[0] || strspn(line, "0123456789") != strlen(line))
			return wl_err_set(err, WL_EIO, "sbatch %s printed no job id: '%s'", script, out);
		snprintf(jobid, cap, "%s", line);
	}
	return WL_OK;
}
