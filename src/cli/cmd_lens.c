/* cmd_lens.c: `wakeline lens`: lens intrinsics from chessboard photos -> LENS.json. */
#define _POSIX_C_SOURCE 200809L
#include <dirent.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>
#include <sys/stat.h>

#include "calib/lens.h"
#include "cli/cli.h"
#include "cv/cv.h"
#include "decode/decode.h"

const char cmd_lens_summary[] = "lens intrinsics from photos of a chessboard -> LENS.json";

static const char HEAD[] =
        "usage: wakeline lens SOURCE --board COLSxROWS --square-mm S -o LENS.json [options]\n"
        "\n"
        "Finds the camera's focal length, principal point and lens distortion from\n"
        "photos of a flat printed chessboard taken with the same camera setting as\n"
        "the tank videos.  SOURCE is a folder of PNG/JPEG photos, one photo, or a clip\n"
        "(one frame every --every-s seconds is offered; move the board slowly).\n"
        "\n";
static const char TAIL[] =
        "\n"
        "Frames without the whole board, frames too alike to one already kept and\n"
        "blurred frames are skipped and counted.  Exit status: 0 ok, 1 failure, 2 usage.\n";

static int is_image_name(const char *name)
{
	const char *dot = strrchr(name, '.');
	return dot && (!strcasecmp(dot, ".png") || !strcasecmp(dot, ".jpg") || !strcasecmp(dot, ".jpeg"));
}

static int cmp_str(const void *a, const void *b)
{
	return strcmp(*(char *const *)a, *(char *const *)b);
}

/* The image files of a folder, sorted; or the one file.  Free with free_list. */
static wl_status list_images(const char *src, char ***out, int *n, wl_err *err)
{
	struct stat sb;
	DIR *d;
	struct dirent *e;
	char **v = NULL;
	int k = 0, cap = 0;
	*out = NULL;
	*n = 0;
	if (stat(src, &sb) != 0)
		return wl_err_set(err, WL_EIO, "cannot open '%s': no such file or folder", src);
	if (!S_ISDIR(sb.st_mode)) {
		v = malloc(sizeof *v);
		if (!v || !(v[0] = strdup(src))) {
			free(v);
			return wl_err_set(err, WL_ENOMEM, "out of memory");
		}
		*out = v;
		*n = 1;
		return WL_OK;
	}
	if (!(d = opendir(src)))
		return wl_err_set(err, WL_EIO, "cannot read folder '%s'", src);
	while ((e = readdir(d))) {
		size_t len;
		if (!is_image_name(e->d_name))
			continue;
		if (k == cap) {
			char **nv = realloc(v, sizeof *v * (size_t)(cap = cap ? 2 * cap : 32));
			if (!nv)
				break;
			v = nv;
		}
		len = strlen(src) + strlen(e->d_name) + 2;
		if (!(v[k] = malloc(len)))
			break;
		snprintf(v[k], len, "%s/%s", src, e->d_name);
		k++;
	}
	closedir(d);
	if (k > 1)
		qsort(v, (size_t)k, sizeof *v, cmp_str);
	*out = v;
	*n = k;
	if (k == 0)
		return wl_err_set(err, WL_EIO, "folder '%s' holds no .png or .jpg photos", src);
	return WL_OK;
}

/* Offers one frame every every_s seconds of a clip. */
static wl_status lens_from_clip(const char *src, double every_s, wl_lens_collector *lc, int *offered,
                                cli_progress *prog, wl_err *err)
{
	wl_decoder *dec = NULL;
	const wl_frame *fr;
	double next_t = 0;
	wl_status st = wl_decoder_open(src, 0, 0, &dec, err);
	*offered = 0;
	if (st)
		return st;
	while (!(st = wl_decoder_next(dec, &fr, err)) && fr) {
		int kept;
		if (fr->t_s + 1e-9 < next_t || fr->corrupt)
			continue;
		next_t = fr->t_s + every_s;
		(*offered)++;
		if ((st = wl_lens_collector_add(lc, fr->luma, fr->width_px, fr->height_px, fr->luma_stride,
		                                &kept, err))) {
			wl_err_prefix(err, st, "%s: frame at %.3f s", src, fr->t_s);
			break;
		}
		cli_progress_update(prog, "lens: %.1f s, %d frames offered", fr->t_s, *offered);
	}
	wl_decoder_destroy(dec);
	return st;
}

static void free_list(char **v, int n)
{
	for (int i = 0; i < n; i++)
		free(v[i]);
	free(v);
}

static int parse_board(const char *arg, void *dest, char *msg, size_t cap)
{
	int *cr = dest;
	char tail;
	if (sscanf(arg, "%dx%d%c", &cr[0], &cr[1], &tail) == 2 && cr[0] >= 3 && cr[1] >= 3)
		return 0;
	snprintf(msg, cap, "give inner corners as COLSxROWS, e.g. 9x6");
	return 1;
}

/* The photos of a folder (or one) offered to the collector. */
static wl_status add_photos(char **files, int n, wl_lens_collector *lc, cli_progress *prog, wl_err *err)
{
	for (int i = 0; i < n; i++) {
		uint8_t *px = NULL;
		int w, h, kept;
		wl_status st = wl_cv_imread(files[i], 1, &px, &w, &h, err);
		if (!st)
			st = wl_lens_collector_add(lc, px, w, h, w, &kept, err);
		free(px);
		if (st)
			return wl_err_prefix(err, st, "%s", files[i]);
		cli_progress_update(prog, "lens: %d/%d photos", i + 1, n);
	}
	return WL_OK;
}

static void print_lens(const char *src, const char *out_path, const wl_lens *lens, int offered)
{
	printf("lens: %s -> %s\n", src, out_path);
	printf("  views used %d of %d (no board %d, too alike %d, blurred %d); coverage %.0f%% of the "
	       "image\n",
	       lens->views_used, offered, lens->views_no_board, lens->views_alike, lens->views_blurred,
	       100 * lens->coverage);
	printf("  RMS reprojection error %.4f px\n", lens->rms_px);
	printf("  fx %.3f  fy %.3f  cx %.3f  cy %.3f  (image %dx%d)\n", lens->cam.K[0], lens->cam.K[4],
	       lens->cam.K[2], lens->cam.K[5], lens->cam.width_px, lens->cam.height_px);
	printf("  distortion k1 %.6f k2 %.6f p1 %.6f p2 %.6f k3 %.6f\n", lens->cam.dist[0], lens->cam.dist[1],
	       lens->cam.dist[2], lens->cam.dist[3], lens->cam.dist[4]);
	if (lens->coverage < 0.5)
		cli_warn("lens",
		         "the board covered only %.0f%% of the image: add photos with the board near the "
		         "edges and "
		         "corners",
		         100 * lens->coverage);
	if (lens->rms_px > 1)
		cli_warn("lens", "RMS %.2f px is high: check the --board size, focus and blur", lens->rms_px);
	if (lens->views_used < 10)
		cli_warn("lens", "only %d views: 10-20 from different angles give steadier results",
		         lens->views_used);
}

int cmd_lens(int argc, char **argv)
{
	const char *out_path = NULL, *src;
	int board[2] = {0, 0}, win = 5, quiet = 0, n_files = 0, status = WL_EXIT_FAIL, rc, first;
	double square_mm = 0, every_s = 0.5;
	struct stat sb;
	char **files = NULL;
	wl_lens_collector *lc = NULL;
	static wl_lens lens;
	wl_err err = {0};
	cli_progress prog;
	const cli_opt tab[] = {
	        CLI_OPT_FN("board", "COLSxROWS", "inner corners of the board (a 10x7-square board is 9x6)",
	                   board, parse_board),
	        CLI_OPT_POS("square-mm", "S", "side of one square in millimetres", &square_mm),
	        CLI_OPT_STR("output", 'o', "FILE", "LENS.json to write", &out_path),
	        CLI_OPT_INT("subpix-win", 0, "N",
	                    "corner refinement window: N is half the side (default 5: 11x11 px)", &win, 1,
	                    50),
	        CLI_OPT_POS("every-s", "T", "clip: seconds between frames offered (default 0.5)", &every_s),
	        CLI_OPT_FLAG("quiet", 'q', "no progress line", &quiet),
	        CLI_OPT_END};
	const cli_opt *tables[] = {tab, NULL};
	if ((rc = cli_parse("lens", HEAD, TAIL, tables, argc, argv, &first)) != CLI_CONTINUE)
		return rc;
	if (first != argc - 1)
		return cli_usage_error("lens", "give one SOURCE (a folder of photos or a photo)");
	if (!board[0] || !(square_mm > 0) || !out_path)
		return cli_usage_error("lens", "--board, --square-mm and -o are required");
	src = argv[first];
	if (wl_lens_collector_create(board[0], board[1], square_mm, win, &lc, &err))
		goto out;
	cli_progress_init(&prog, quiet);
	if (stat(src, &sb) == 0 && !S_ISDIR(sb.st_mode) && !is_image_name(src)) {
		if (lens_from_clip(src, every_s, lc, &n_files, &prog, &err))
			goto out;
		n_files = -n_files; /* frames, not files: nothing to free */
	} else if (list_images(src, &files, &n_files, &err) || add_photos(files, n_files, lc, &prog, &err)) {
		goto out;
	}
	cli_progress_done(&prog);
	if (wl_lens_collector_finish(lc, &lens, &err))
		goto out;
	snprintf(lens.source, sizeof lens.source, "%s", src);
	if (wl_lens_save(out_path, &lens, &err))
		goto out;
	print_lens(src, out_path, &lens, n_files < 0 ? -n_files : n_files);
	status = WL_EXIT_OK;
out:
	if (status != WL_EXIT_OK)
		cli_fail("lens", &err);
	wl_lens_collector_destroy(lc);
	free_list(files, n_files > 0 ? n_files : 0);
	return cli_finish("lens", status);
}
