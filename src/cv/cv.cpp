/*
 * cv.cpp: the OpenCV adapter behind cv.h.  The only C++ file and the only
 * OpenCV include in wakeline; every entry point catches all exceptions.
 */
#include "cv/cv.h"

#include <dlfcn.h>

#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <exception>
#include <vector>

#include <opencv2/calib3d.hpp>
#include <opencv2/core.hpp>
#include <opencv2/imgcodecs.hpp>
#include <opencv2/imgproc.hpp>

namespace
{

wl_status fail(wl_err *err, wl_status code, const char *what, const char *detail)
{
	return wl_err_set(err, code, "%s: %s", what, detail);
}

cv::Mat wrap(const uint8_t *gray, int w, int h, int stride)
{
	return cv::Mat(h, w, CV_8UC1, const_cast<uint8_t *>(gray), static_cast<size_t>(stride));
}

/* OpenCV's image codecs (libopencv_imgcodecs) pull in some fifty
 * libraries (TIFF, OpenEXR, GDCM, JPEG 2000, ...): linked directly they cost
 * every command ~100 ms of start-up, more than `clean` and `measure` need for
 * a whole clip.  Only `lens` and `calibrate` on a photo read image files, so
 * cv::imread is looked up in the library on first use.  The symbol is
 * cv::imread(const cv::String &, int) of OpenCV 4 (cv::String is std::string
 * there), in the GCC/Clang C++ ABI; the soname is OpenCV's
 * (libopencv_imgcodecs.so.<major><two-digit minor>, e.g. .406 for 4.6). */
using imread_fn = cv::Mat (*)(const cv::String &, int);
#define WL_CV_IMREAD_SYMBOL "_ZN2cv6imreadERKNSt7__cxx1112basic_stringIcSt11char_traitsIcESaIcEEEi"

struct imread_lib {
	imread_fn fn = nullptr;
	const char *why = nullptr;
	char msg[160];
	imread_lib()
	{
		char so[64];
		std::snprintf(so, sizeof so, "libopencv_imgcodecs.so.%d%02d", CV_VERSION_MAJOR,
		              CV_VERSION_MINOR);
		void *lib = dlopen(so, RTLD_NOW | RTLD_GLOBAL);
		if (!lib)
			std::snprintf(msg, sizeof msg,
			              "%s could not be loaded: apt-get install libopencv-imgcodecs%d%02d", so,
			              CV_VERSION_MAJOR, CV_VERSION_MINOR);
		else if (!(fn = reinterpret_cast<imread_fn>(dlsym(lib, WL_CV_IMREAD_SYMBOL))))
			std::snprintf(
			        msg, sizeof msg,
			        "%s has no cv::imread of the expected signature: rebuild wakeline against "
			        "the installed OpenCV",
			        so);
		why = fn ? nullptr : msg;
		/* the library stays loaded for the life of the process */
	}
};

imread_fn load_imread(const char **why)
{
	static const imread_lib lib; /* initialised once, thread-safe (C++11) */
	*why = lib.why;
	return lib.fn;
}

} // namespace

extern "C" wl_status wl_cv_imread(const char *path, int channels, uint8_t **pixels, int *width_px,
                                  int *height_px, wl_err *err)
{
	*pixels = nullptr;
	try {
		if (channels != 1 && channels != 3)
			return wl_err_set(err, WL_EINVAL, "imread: channels must be 1 or 3");
		const char *why = nullptr;
		imread_fn imread = load_imread(&why);
		if (!imread)
			return wl_err_set(err, WL_EIO, "cannot read image '%s': %s", path, why);
		cv::Mat m = imread(path, (channels == 1 ? cv::IMREAD_GRAYSCALE : cv::IMREAD_COLOR) |
		                                 cv::IMREAD_IGNORE_ORIENTATION);
		if (m.empty())
			return wl_err_set(err, WL_EIO,
			                  "cannot read image '%s': missing, unreadable or not an image",
			                  path);
		if (channels == 3)
			cv::cvtColor(m, m, cv::COLOR_BGR2RGB);
		size_t row = static_cast<size_t>(m.cols) * static_cast<size_t>(channels);
		uint8_t *buf = static_cast<uint8_t *>(std::malloc(row * static_cast<size_t>(m.rows)));
		if (!buf)
			return wl_err_set(err, WL_ENOMEM, "out of memory reading '%s'", path);
		for (int r = 0; r < m.rows; r++)
			std::memcpy(buf + row * static_cast<size_t>(r), m.ptr(r), row);
		*pixels = buf;
		*width_px = m.cols;
		*height_px = m.rows;
		return WL_OK;
	} catch (const std::exception &e) {
		return wl_err_set(err, WL_EIO, "cannot read image '%s': %s", path, e.what());
	} catch (...) {
		return wl_err_set(err, WL_EIO, "cannot read image '%s': unknown OpenCV error", path);
	}
}

extern "C" wl_status wl_cv_find_chessboard(const uint8_t *gray, int width_px, int height_px, int stride,
                                           int cols, int rows, int half_win, double *corners, int *found,
                                           wl_err *err)
{
	*found = 0;
	try {
		cv::Mat img = wrap(gray, width_px, height_px, stride);
		std::vector<cv::Point2f> pts;
		bool ok = cv::findChessboardCorners(img, cv::Size(cols, rows), pts,
		                                    cv::CALIB_CB_ADAPTIVE_THRESH |
		                                            cv::CALIB_CB_NORMALIZE_IMAGE);
		if (!ok || pts.size() != static_cast<size_t>(cols * rows))
			return WL_OK;
		cv::cornerSubPix(img, pts, cv::Size(half_win, half_win), cv::Size(-1, -1),
		                 cv::TermCriteria(cv::TermCriteria::EPS + cv::TermCriteria::COUNT, 30, 0.1));
		for (size_t i = 0; i < pts.size(); i++) {
			corners[2 * i] = pts[i].x;
			corners[2 * i + 1] = pts[i].y;
		}
		*found = 1;
		return WL_OK;
	} catch (const std::exception &e) {
		return fail(err, WL_EINVAL, "chessboard detection failed", e.what());
	} catch (...) {
		return fail(err, WL_EINVAL, "chessboard detection failed", "unknown OpenCV error");
	}
}

extern "C" wl_status wl_cv_sharpness(const uint8_t *gray, int width_px, int height_px, int stride,
                                     double *out, wl_err *err)
{
	try {
		cv::Mat lap;
		cv::Scalar mean, sd;
		cv::Laplacian(wrap(gray, width_px, height_px, stride), lap, CV_64F);
		cv::meanStdDev(lap, mean, sd);
		*out = sd[0] * sd[0];
		return WL_OK;
	} catch (const std::exception &e) {
		return fail(err, WL_EINVAL, "sharpness measure failed", e.what());
	} catch (...) {
		return fail(err, WL_EINVAL, "sharpness measure failed", "unknown OpenCV error");
	}
}

extern "C" wl_status wl_cv_calibrate(const double *object, int n_per_view, const double *image, int n_views,
                                     int width_px, int height_px, int flags, double K[9], double dist[5],
                                     double *rms_px, double *per_view_rms, wl_err *err)
{
	try {
		std::vector<std::vector<cv::Point3f>> obj(static_cast<size_t>(n_views));
		std::vector<std::vector<cv::Point2f>> img(static_cast<size_t>(n_views));
		for (int v = 0; v < n_views; v++)
			for (int i = 0; i < n_per_view; i++) {
				const double *o = object + 3 * i,
				             *p = image + 2 * (static_cast<size_t>(v) * n_per_view + i);
				obj[static_cast<size_t>(v)].emplace_back(static_cast<float>(o[0]),
				                                         static_cast<float>(o[1]),
				                                         static_cast<float>(o[2]));
				img[static_cast<size_t>(v)].emplace_back(static_cast<float>(p[0]),
				                                         static_cast<float>(p[1]));
			}
		cv::Mat Km, Dm, sd_in, sd_ex, pv;
		std::vector<cv::Mat> rv, tv;
		double rms = cv::calibrateCamera(obj, img, cv::Size(width_px, height_px), Km, Dm, rv, tv,
		                                 sd_in, sd_ex, pv, flags);
		Km.convertTo(Km, CV_64F);
		Dm.convertTo(Dm, CV_64F);
		for (int r = 0; r < 3; r++)
			for (int c = 0; c < 3; c++)
				K[3 * r + c] = Km.at<double>(r, c);
		for (int i = 0; i < 5; i++)
			dist[i] = static_cast<int>(Dm.total()) > i ? Dm.at<double>(i) : 0.0;
		*rms_px = rms;
		if (per_view_rms)
			for (int v = 0; v < n_views; v++)
				per_view_rms[v] = pv.at<double>(v);
		return WL_OK;
	} catch (const std::exception &e) {
		return fail(err, WL_ECALIB, "lens calibration failed", e.what());
	} catch (...) {
		return fail(err, WL_ECALIB, "lens calibration failed", "unknown OpenCV error");
	}
}

extern "C" int wl_cv_flags(int ours)
{
	int f = 0;
	if (ours & WL_CV_FIX_K2)
		f |= cv::CALIB_FIX_K2;
	if (ours & WL_CV_FIX_K3)
		f |= cv::CALIB_FIX_K3;
	if (ours & WL_CV_ZERO_TANGENT)
		f |= cv::CALIB_ZERO_TANGENT_DIST;
	return f;
}

extern "C" wl_status wl_cv_holdout_rms(const double *object, int n_per_view, const double *image, int n_views,
                                       int width_px, int height_px, int flags, double *cv_rms_px, wl_err *err)
{
	try {
		if (n_views < 4)
			return wl_err_set(err, WL_ECALIB, "leave-one-out needs at least 4 views");
		std::vector<cv::Point3f> obj;
		std::vector<std::vector<cv::Point2f>> img(static_cast<size_t>(n_views));
		for (int i = 0; i < n_per_view; i++)
			obj.emplace_back(static_cast<float>(object[3 * i]),
			                 static_cast<float>(object[3 * i + 1]),
			                 static_cast<float>(object[3 * i + 2]));
		for (int v = 0; v < n_views; v++)
			for (int i = 0; i < n_per_view; i++) {
				const double *p = image + 2 * (static_cast<size_t>(v) * n_per_view + i);
				img[static_cast<size_t>(v)].emplace_back(static_cast<float>(p[0]),
				                                         static_cast<float>(p[1]));
			}
		double ss = 0;
		size_t n = 0;
		for (int out = 0; out < n_views; out++) {
			std::vector<std::vector<cv::Point3f>> o2;
			std::vector<std::vector<cv::Point2f>> i2;
			for (int v = 0; v < n_views; v++)
				if (v != out) {
					o2.push_back(obj);
					i2.push_back(img[static_cast<size_t>(v)]);
				}
			cv::Mat K, D, rv, tv;
			std::vector<cv::Mat> rvs, tvs;
			cv::calibrateCamera(o2, i2, cv::Size(width_px, height_px), K, D, rvs, tvs, flags);
			const std::vector<cv::Point2f> &held = img[static_cast<size_t>(out)];
			cv::solvePnP(obj, held, K, D, rv, tv, false, cv::SOLVEPNP_EPNP);
			cv::solvePnP(obj, held, K, D, rv, tv, true, cv::SOLVEPNP_ITERATIVE);
			std::vector<cv::Point2f> pr;
			cv::projectPoints(obj, rv, tv, K, D, pr);
			for (size_t i = 0; i < pr.size(); i++) {
				double dx = pr[i].x - held[i].x, dy = pr[i].y - held[i].y;
				ss += dx * dx + dy * dy;
				n++;
			}
		}
		*cv_rms_px = n ? std::sqrt(ss / static_cast<double>(n)) : 0.0;
		return WL_OK;
	} catch (const std::exception &e) {
		return fail(err, WL_ECALIB, "lens calibration (leave-one-out) failed", e.what());
	} catch (...) {
		return fail(err, WL_ECALIB, "lens calibration (leave-one-out) failed",
		            "unknown OpenCV error");
	}
}
