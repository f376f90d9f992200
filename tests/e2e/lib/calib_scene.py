#!/usr/bin/python3
"""Synthetic calibration scenes for the calibrate tests (an invented tank,
2.4 m x 1.2 m).  The camera is built here independently of wakeline's
camera model and points are projected with Debian's python3-opencv
(cv2.projectPoints), so the tests compare against an outside reference.

  calib_scene.py points OUT.csv IMAGE.png [--tilt DEG] [--noise PX] [--seed N]
                 [--grid NXxNY] [--bad INDEX:DU] [--f PX]
  calib_scene.py camera [--tilt DEG]       prints height and tilt
  calib_scene.py tags LAYOUT.csv SCENE.png --tagdir DIR [--tilt DEG]
      renders DIR/tag<ID>.png (from `wakeline markers`, any resolution) onto the
      floor at the layout's positions, sizes and yaws, seen by the camera
"""
import argparse, sys
import numpy as np
import cv2

W, H = 1920, 1080


def camera(tilt_deg, f=1400.0, height=2.0, centre=(1.2, 0.6)):
    t = np.radians(tilt_deg)
    eye = np.array([centre[0], centre[1] - height * np.tan(t), height])
    target = np.array([centre[0], centre[1], 0.0])
    z = target - eye; z /= np.linalg.norm(z)
    x = np.cross(z, [0, 1.0, 0]) if abs(z[1]) < 0.999 else np.array([1.0, 0, 0])
    x /= np.linalg.norm(x)
    if x[0] < 0:
        x = -x
    y = np.cross(z, x)
    R = np.stack([x, y, z])
    if np.linalg.det(R) < 0:
        R[1] = -R[1]
    tvec = -R @ eye
    K = np.array([[f, 0, (W - 1) / 2], [0, f, (H - 1) / 2], [0, 0, 1]])
    return K, R, tvec, eye


def surface_point(eye, X, depth, n):
    """Where the ray from the camera to submerged point X crosses the flat
    surface z = depth: Snell's law, sin(a_air) = n sin(a_water), solved with
    scipy's brentq (independent of wakeline's bisection)."""
    from scipy.optimize import brentq
    dx, dy = X[0] - eye[0], X[1] - eye[1]
    r = np.hypot(dx, dy)
    if r == 0:
        return (X[0], X[1], depth)
    h, d = eye[2] - depth, depth - X[2]
    f = lambda s: s / np.hypot(s, h) - n * (r - s) / np.hypot(r - s, d)
    s = brentq(f, 0, r, xtol=1e-13)
    return (eye[0] + dx / r * s, eye[1] + dy / r * s, depth)


def project(K, R, t, X):
    rvec, _ = cv2.Rodrigues(R)
    uv, _ = cv2.projectPoints(np.asarray(X, float).reshape(-1, 1, 3), rvec, t, K, None)
    return uv.reshape(-1, 2)


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("mode")
    ap.add_argument("out", nargs="?")
    ap.add_argument("image", nargs="?")
    ap.add_argument("--tilt", type=float, default=20)
    ap.add_argument("--f", type=float, default=1400)
    ap.add_argument("--noise", type=float, default=0.3)
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--grid", default="5x3")
    ap.add_argument("--z", type=float, default=0.0)
    ap.add_argument("--bad", default="")
    ap.add_argument("--tagdir", default=".")
    ap.add_argument("--water", type=float, default=0.0, help="floor under this depth of water (m)")
    ap.add_argument("--index", type=float, default=1.333)
    a = ap.parse_args()
    K, R, t, eye = camera(a.tilt, a.f)
    if a.mode == "camera":
        print("%.6f %.6f" % (eye[2], a.tilt))
        return
    if a.mode == "tags":
        tags_scene(a, K, R, t)
        return
    rng = np.random.default_rng(a.seed)
    if a.grid == "six":  # six points in general position (no three on a line)
        X = [(0.1, 0.1, a.z), (1.2, 0.15, a.z), (2.3, 0.1, a.z), (0.15, 1.1, a.z), (1.25, 0.6, a.z),
             (2.3, 1.05, a.z)]
    else:
        nx, ny = map(int, a.grid.split("x"))
        X = [(0.1 + 2.2 * i / (nx - 1) + 0.03 * (j % 2), 0.1 + 1.0 * j / (ny - 1), a.z)
             for j in range(ny) for i in range(nx)]
    P = [surface_point(eye, x, a.water, a.index) for x in X] if a.water > 0 else X
    uv = project(K, R, t, P) + rng.normal(0, a.noise, (len(X), 2))
    if a.bad:
        i, du = a.bad.split(":")
        uv[int(i), 0] += float(du)
    with open(a.out, "w") as f:
        f.write("# invented example tank, synthetic camera %.0f deg tilt\n" % a.tilt)
        f.write("id,u_px,v_px,x_m,y_m,z_m\n")
        for k, ((u, v), (x, y, z)) in enumerate(zip(uv, X)):
            f.write("p%d,%.4f,%.4f,%.4f,%.4f,%.4f\n" % (k, u, v, x, y, z))
    if a.image:
        cv2.imwrite(a.image, np.full((H, W), 128, np.uint8))


def black_square(img):
    """Corners of the tag's black square in a tag image (pixel-centre
    convention: edges half a pixel outside the outermost black pixels),
    printed top-left, top-right, bottom-right, bottom-left."""
    n, lab, stats, _ = cv2.connectedComponentsWithStats((img < 128).astype(np.uint8), connectivity=4)
    big = 1 + int(np.argmax(stats[1:, cv2.CC_STAT_AREA]))  # the tag, not the label or scale bar
    ys, xs = np.nonzero(lab == big)
    x0, x1, y0, y1 = xs.min() - 0.5, xs.max() + 0.5, ys.min() - 0.5, ys.max() + 0.5
    return np.array([[x0, y0], [x1, y0], [x1, y1], [x0, y1]], np.float32)


def tags_scene(a, K, R, t):
    import csv
    scene = np.full((H, W), 170, np.uint8)
    for row in csv.DictReader(l for l in open(a.out) if not l.startswith("#")):
        mid, x, y = int(row["marker_id"]), float(row["x_m"]), float(row["y_m"])
        s, yaw = float(row["size_m"]), float(row.get("yaw_rad") or 0)
        tag = cv2.imread("%s/tag%d.png" % (a.tagdir, mid), cv2.IMREAD_GRAYSCALE)
        src = black_square(tag)
        c, sn, h = np.cos(yaw), np.sin(yaw), s / 2
        # printed top-left, top-right, bottom-right, bottom-left on the floor:
        # the print's "right" is tank +x and its "top" tank +y at yaw 0
        local = [(-h, h), (h, h), (h, -h), (-h, -h)]
        X = [(x + c * u - sn * v, y + sn * u + c * v, 0.0) for u, v in local]
        dst = project(K, R, t, X).astype(np.float32)
        Hm = cv2.getPerspectiveTransform(src, dst)
        warped = cv2.warpPerspective(tag, Hm, (W, H), flags=cv2.INTER_AREA, borderValue=255)
        # paste the tag with its white quiet zone (one cell around the square)
        q = (src[1, 0] - src[0, 0]) / 8
        big = np.array([[src[0, 0] - q, src[0, 1] - q], [src[1, 0] + q, src[1, 1] - q],
                        [src[2, 0] + q, src[2, 1] + q], [src[3, 0] - q, src[3, 1] + q]], np.float32)
        mask = np.zeros(tag.shape, np.uint8)
        cv2.fillConvexPoly(mask, np.round(big).astype(np.int32), 255)
        m = cv2.warpPerspective(mask, Hm, (W, H), flags=cv2.INTER_NEAREST) > 0
        scene[m] = warped[m]
    cv2.imwrite(a.image, scene)


if __name__ == "__main__":
    main()
