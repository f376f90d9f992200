# browser.bash: sourced by the tests that drive headless Chromium.  Finds
# Debian's chromium and node, and installs playwright-core (the driver
# library only, no browser download) with npm into a cache folder inside the
# build folder, once.  Sourced after tests/e2e/lib/harness.sh: a missing
# chromium (scripts/setup installs it) fails the test; without node and npm
# (not in scripts/setup) or when npm cannot fetch the driver (no network)
# the test is skipped (skip_all, exit 77).
#   wl_browser_setup   sets WL_PLAYWRIGHT (the module's folder) and WL_CHROME
WL_PLAYWRIGHT_VERSION=1.49.1
wl_browser_setup() {
	local cache="${WL_BUILD_DIR:?}/npm-cache/playwright-$WL_PLAYWRIGHT_VERSION"
	WL_CHROME=$(command -v chromium || true)
	if [ -z "$WL_CHROME" ]; then
		fail "chromium is not installed (scripts/setup installs it)"
	fi
	if ! command -v node > /dev/null || ! command -v npm > /dev/null; then
		skip_all "node and npm drive Chromium and are not installed (apt-get install nodejs npm; scripts/setup leaves them out: Debian's npm conflicts with other nodejs builds)"
	fi
	if [ ! -f "$cache/node_modules/playwright-core/package.json" ]; then
		mkdir -p "$cache"
		if ! (cd "$cache" && npm install --prefix "$cache" --no-audit --no-fund --loglevel=error \
			"playwright-core@$WL_PLAYWRIGHT_VERSION" > npm.log 2>&1); then
			rm -rf "$cache/node_modules"
			skip_all "npm could not install playwright-core $WL_PLAYWRIGHT_VERSION (the network?): $(tail -2 "$cache/npm.log")"
		fi
	fi
	WL_PLAYWRIGHT="$cache/node_modules/playwright-core"
	export WL_PLAYWRIGHT WL_CHROME
}
