/*
 * slurm.h: a sweep as Slurm jobs (see docs/cluster.md): the script of a job
 * array of N shard tasks (task K runs `wakeline batch ... --shard K/N`), the
 * script of the merge that runs after every task has ended, and their
 * submission with sbatch.
 *
 * Pipeline position: beside the batch runner; the CLI's `batch --slurm`
 * plans the sweep (wl_batch_plan writes OUT/batch.json), writes the scripts
 * and submits them.
 *
 * Files: OUT/slurm/shards.sbatch, OUT/slurm/merge.sbatch (written
 * atomically, executable) and the folder OUT/slurm/logs/ for the jobs'
 * output (Slurm does not create it).  The scripts carry absolute paths: the
 * nodes must see the program, the clips and OUT at the same paths (a shared
 * file system).
 *
 * Errors: a bad option value (a character that would break the script, an
 * extra line that is not an #SBATCH line) is WL_EINVAL naming it; sbatch
 * failing is WL_EIO with what sbatch said.
 */
#ifndef WL_SLURM_H
#define WL_SLURM_H

#include <stddef.h>

#include "core/err.h"

typedef struct {
	const char *program; /* absolute path of the wakeline the jobs run */
	const char *out_dir; /* OUT (absolute) */
	int shards;          /* N >= 1: the array is 0..N-1 and N is written into the script */
	/* #SBATCH options; NULL or 0: not written (the cluster's default) */
	const char *partition, *time, *mem, *account;
	const char *merge_time; /* the merge job's --time (NULL: that of the shards) */
	int cpus_per_task;
	const char *extra_path; /* a file of extra "#SBATCH ..." lines for both scripts (NULL: none) */
	const char *job_name;   /* prefix of the jobs' names (NULL: "wakeline") */
	/* the arguments of `wakeline batch` for every task (without --shard)
	 * and of `wakeline merge`, absolute paths where they name files */
	const char *const *batch_args;
	size_t nbatch_args;
	const char *const *merge_args;
	size_t nmerge_args;
} wl_slurm_opts;

/* Writes OUT/slurm/shards.sbatch and OUT/slurm/merge.sbatch and creates
 * OUT/slurm/logs/.  The paths of the two scripts go to shard_script and
 * merge_script (cap bytes each). */
wl_status wl_slurm_write(const wl_slurm_opts *o, char *shard_script, char *merge_script, size_t cap,
                         wl_err *err);

/* Runs `sbatch --parsable [--dependency=DEP] SCRIPT` (sbatch from PATH) and
 * puts the job id it printed into jobid (cap bytes).  dependency may be
 * NULL. */
wl_status wl_slurm_submit(const char *script, const char *dependency, char *jobid, size_t cap, wl_err *err);

#endif
