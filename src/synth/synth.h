/*
 * synth.h: the synthetic-footage renderer.  It turns a scene (a tank with
 * AprilTag floor markers, a posed pinhole camera with optional lens
 * distortion and water layer, and robots moving on parametric paths) into
 * frames whose geometry is exactly that of core/camera.h, plus the ground
 * truth of every robot in every frame.  The test suite and the demo use it;
 * it sits beside the pipeline (uses core and decode/vwriter.h only).
 *
 * Frames (DEVELOPERS.md "Conventions"): the tank frame is right-handed, in
 * metres, with the origin at the tank's corner (0, 0), x along its length,
 * y along its width, z up; the tank covers [0, length] x [0, width] of the
 * floor plane z = 0.  Headings are counter-clockwise from +x.  The scene file
 * is documented key by key in docs/synth.md; its angles are in degrees
 * (keys end in _deg), everything here is in radians and metres.
 *
 * Ownership: wl_synth_scene is plain data (fixed arrays, nothing to free)
 * filled by wl_synth_load / wl_synth_parse.  A wl_synth_renderer is created
 * by wl_synth_renderer_create and freed by wl_synth_renderer_destroy (NULL
 * ok); it keeps a pointer to the scene, which must outlive it.
 * Determinism: every random choice (frame jitter, noise, glare) is drawn
 * from counter-based hashes of the scene's seed, so a frame's pixels and
 * times do not depend on which frames were rendered before it.
 */
#ifndef WL_SYNTH_H
#define WL_SYNTH_H

#include <stddef.h>
#include <stdint.h>

#include "core/camera.h"
#include "core/err.h"

#define WL_SYNTH_MAX_MARKERS 64
#define WL_SYNTH_MAX_ROBOTS 32
#define WL_SYNTH_MAX_OCCL 16
#define WL_SYNTH_MAX_SPOTS 16     /* aimed glare spots */
#define WL_SYNTH_MAX_OCCLUDERS 16 /* opaque shapes above the robots */
#define WL_SYNTH_MAX_DOCKS 4      /* docking spans per robot */
#define WL_SYNTH_MAX_SIZE_PX 8192
#define WL_SYNTH_MAX_FRAMES 1000000L

typedef struct {
	int id;          /* tag36h11 id */
	double x_m, y_m; /* tag centre on the floor */
	double z_m;      /* height of the card above the floor (a block); 0: on the floor */
	double size_m;   /* edge of the black square (AprilTag's "tag size") */
	double yaw_rad;  /* tag's right edge direction, CCW from +x */
} wl_synth_marker;

typedef enum { WL_SYNTH_TAG = 0, WL_SYNTH_CAPS, WL_SYNTH_CAP } wl_synth_mark_kind;

typedef struct {
	double x0_m, y0_m, heading0_rad; /* start pose of the path point */
	double speed_mps;                /* cruise speed (>= 0) */
	double curvature_1pm;            /* 1/radius, > 0 turns counter-clockwise, 0 straight */
	double rest_s, accel_s;          /* at rest, then a linear speed ramp */
	double osc_amp_rad, osc_freq_hz, osc_phase_rad; /* body yaw oscillation */
	double pivot_ahead_m;                           /* yaw pivot ahead of the marker (sway); 0: none */
} wl_synth_path;

/* Docking: for t0 <= t <= t1 the robot rides rigidly beside robot `with`
 * (an index into robots[]): its marker at along_m ahead of and left_m to
 * the left of the leader's marker (leader's heading axes), its heading the
 * leader's + dheading_rad.  Over blend_s before t0 and after t1 the pose
 * blends (smoothstep) between its own path and the docked pose. */
typedef struct {
	int with;
	double along_m, left_m, dheading_rad;
	double t0_s, t1_s, blend_s;
} wl_synth_dock;

/* An aimed glare spot: a soft bright spot (Gaussian, sigma = radius / 2)
 * whose centre is at start + velocity * tau pixels, tau = t - t0 (modulo
 * repeat_s when > 0; not drawn for t < t0), measured from the projected
 * marker centre of robot `robot` (an index; -1: from the image origin). */
typedef struct {
	int robot;
	double start_px[2], velocity_pxps[2];
	double t0_s, repeat_s;
	double radius_px, gain;
} wl_synth_spot;

/* An opaque shape on the horizontal plane height_m (above the robots'
 * marker planes), present for t0 <= t <= t1, its centre moving from
 * start_m at velocity_mps: a disc (ellipse with axes size_m along x and y)
 * or a rectangle (sides size_m along x and y). */
typedef enum { WL_SYNTH_DISC = 0, WL_SYNTH_RECT } wl_synth_shape;
typedef struct {
	wl_synth_shape shape;
	double size_m[2], height_m;
	double start_m[2], velocity_mps[2];
	double t0_s, t1_s;
	uint8_t rgb[3];
} wl_synth_occluder;

typedef struct {
	int id;            /* robot id in the truth CSV */
	double diameter_m; /* the disc */
	double height_m;   /* marker plane above the floor */
	uint8_t disc_rgb[3];
	wl_synth_mark_kind kind;
	int tag_id;                        /* WL_SYNTH_TAG */
	double tag_size_m;                 /* black square edge */
	double tag_offset_rad;             /* tag "up" = heading + offset */
	uint8_t front_rgb[3], back_rgb[3]; /* WL_SYNTH_CAPS (front only for CAP) */
	double cap_diameter_m;
	double cap_offset_m; /* cap centres at +-offset along the heading (CAP: 0) */
	wl_synth_path path;
	int n_occl;
	double occl_t0_s[WL_SYNTH_MAX_OCCL], occl_t1_s[WL_SYNTH_MAX_OCCL]; /* hidden for t in [t0, t1] */
	int n_docks;
	wl_synth_dock docks[WL_SYNTH_MAX_DOCKS];
} wl_synth_robot;

typedef struct {
	char description[512];
	uint64_t seed;
	/* tank */
	double tank_length_m, tank_width_m, wall_m;
	uint8_t floor_rgb[3], wall_rgb[3], surround_rgb[3];
	double water_depth_m, water_index;
	int n_markers;
	wl_synth_marker markers[WL_SYNTH_MAX_MARKERS];
	/* camera (cam is built from the fields below) */
	wl_camera cam;
	double cam_pos_m[3], tilt_rad, tilt_dir_rad, yaw_rad;
	double hfov_rad; /* as given, or derived from the focal length */
	/* a camera that is bumped mid-run (camera_move): from move_t_s on the
	 * frames are rendered with cam_moved (see wl_synth_camera_at) */
	int has_move;
	double move_t_s, move_tilt_rad, move_yaw_rad, move_shift_m[3];
	wl_camera cam_moved;
	/* timing */
	double fps, duration_s, jitter; /* jitter: fraction of a frame interval, [0, 0.9] */
	int time_base_den;
	/* encoding */
	int crf, bit_rate_bps, b_frames, rotation_deg;
	/* effects */
	int supersample;    /* n x n samples per pixel */
	double noise_sigma; /* Gaussian sensor noise, grey levels */
	int blur_samples;   /* sub-frame renders averaged (1: none) */
	double exposure_s;  /* exposure centred on the frame time */
	int n_glare;
	double glare_radius_px, glare_gain, glare_speed_pxps;
	/* robots */
	int n_robots;
	wl_synth_robot robots[WL_SYNTH_MAX_ROBOTS];
	/* what real water and phones add (docs/synth.md): rolling-shutter
	 * readout (coded row v is exposed at t + v / height * readout_s),
	 * aimed glare spots, opaque occluders */
	double readout_s;
	int n_spots;
	wl_synth_spot spots[WL_SYNTH_MAX_SPOTS];
	int n_occluders;
	wl_synth_occluder occluders[WL_SYNTH_MAX_OCCLUDERS];
} wl_synth_scene;

/* One robot's true state at a time. */
typedef struct {
	double x_m, y_m;    /* marker centre (tag centre) in the tank frame */
	double heading_rad; /* body heading, wrapped to (-pi, pi] */
	double speed_mps;   /* path speed */
	int visible;        /* 0 inside an occlusion interval */
} wl_synth_pose;

/* Loads a scene file; errors name the file and the key ("scene.json:
 * robots[0].path: key 'speed_mps' must be a number").  Unknown keys are
 * errors too (a misspelt key would otherwise silently take its default). */
wl_status wl_synth_load(const char *path, wl_synth_scene *sc, wl_err *err);
wl_status wl_synth_parse(const char *name, const char *text, size_t len, wl_synth_scene *sc, wl_err *err);

/* Writes the scene with every parameter (defaults included) and the camera
 * model (K, distortion, R, t, position) as JSON, atomically. */
wl_status wl_synth_save_scene(const char *path, const wl_synth_scene *sc, wl_err *err);

/* Frames: count, and the presentation time of frame k as a multiple of
 * 1/time_base_den (strictly increasing in k) and in seconds. */
long wl_synth_frame_count(const wl_synth_scene *sc);
int64_t wl_synth_frame_pts(const wl_synth_scene *sc, long k);
double wl_synth_frame_time(const wl_synth_scene *sc, long k);

/* The camera that frames at time t_s are rendered with: cam, or cam_moved
 * from the camera move on. */
const wl_camera *wl_synth_camera_at(const wl_synth_scene *sc, double t_s);

/* The true state of robot r at time t_s (see docs/synth.md for the model). */
void wl_synth_robot_pose(const wl_synth_scene *sc, int r, double t_s, wl_synth_pose *out);

/* The fraction (0..1) of robot r's marker (a tag's black square, or its
 * caps) seen in the frame at time t_s: not hidden by an occlusion interval,
 * an occluder or a robot drawn above it, and inside the image. */
double wl_synth_visible_fraction(const wl_synth_scene *sc, int r, double t_s);

/* The time at which the image row through robot r's marker centre is
 * exposed in the frame at t_s (t_s itself without rolling shutter). */
double wl_synth_centre_time(const wl_synth_scene *sc, int r, double t_s);

typedef struct wl_synth_renderer wl_synth_renderer;

/* Renders the static background (once) with nthreads threads (<= 0: 2). */
wl_status wl_synth_renderer_create(const wl_synth_scene *sc, int nthreads, wl_synth_renderer **out,
                                   wl_err *err);
void wl_synth_renderer_destroy(wl_synth_renderer *r);

/* Renders frame k (at wl_synth_frame_time(sc, k)) as packed RGB24 into rgb
 * (stride >= 3 * width).  Noise and glare are applied when the scene asks. */
wl_status wl_synth_render_frame(wl_synth_renderer *r, long k, uint8_t *rgb, int stride, wl_err *err);

/* Renders at an arbitrary time t_s with noise drawn for frame k. */
wl_status wl_synth_render_at(wl_synth_renderer *r, double t_s, long k, uint8_t *rgb, int stride, wl_err *err);

/* Called after each encoded frame; return non-zero to stop (WL_EINVAL). */
typedef int (*wl_synth_progress_fn)(long done, long total, void *ctx);

/* Writes the clip (H.264 MP4 at mp4_path), its truth table
 * (<stem>.truth.csv) and the scene used (<stem>.scene.json), where <stem>
 * is mp4_path without a trailing ".mp4".  All three are atomic; on failure
 * none is left behind. */
wl_status wl_synth_write_clip(const wl_synth_scene *sc, const char *mp4_path, wl_synth_progress_fn fn,
                              void *ctx, wl_err *err);

/* Writes frame k as a PNG (for calibration from a still image), atomically. */
wl_status wl_synth_write_png(const wl_synth_scene *sc, long k, const char *png_path, wl_err *err);

#endif
