# browser.bash: sourced by the tests that drive headless Chromium.  Finds
# Debian's chromium and node, and installs playwright-core (the driver
# library only, no browser download) with npm into a cache folder inside the
# build folder, once.  Exits 77 (shown as skipped by CTest) when any of them
# is missing or npm cannot install.
#   wl_browser_setup   sets WL_PLAYWRIGHT (the module's folder) and WL_CHROME
WL_PLAYWRIGHT_VERSION=1.49.1
wl_browser_setup() {
	local cache="${WL_BUILD_DIR:?}/npm-cache/playwright-$WL_PLAYWRIGHT_VERSION"
	WL_CHROME=$(command -v chromium || true)
	if [ -z "$WL_CHROME" ]; then
		echo "SKIP: chromium is not installed (scripts/setup installs it)"
		exit 77
	fi
	if ! command -v node > /dev/null || ! command -v npm > /dev/null; then
		echo "SKIP: node and npm are needed to drive Chromium (Debian: apt-get install nodejs npm)"
		exit 77
	fi
	if [ ! -f "$cache/node_modules/playwright-core/package.json" ]; then
		mkdir -p "$cache"
		if ! (cd "$cache" && npm install --prefix "$cache" --no-audit --no-fund --loglevel=error \
			"playwright-core@$WL_PLAYWRIGHT_VERSION" > npm.log 2>&1); then
			echo "SKIP: npm could not install playwright-core $WL_PLAYWRIGHT_VERSION: $(tail -2 "$cache/npm.log")"
			rm -rf "$cache/node_modules"
			exit 77
		fi
	fi
	WL_PLAYWRIGHT="$cache/node_modules/playwright-core"
	export WL_PLAYWRIGHT WL_CHROME
}
