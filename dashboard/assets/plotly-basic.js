/* realbasis: the charts' plotly.js is the "basic" bundle (scatter and bar traces, all the
 * charts use; 1.2 MB instead of 4.6 MB), vendored in assets/vendor/ (MIT licence beside
 * it; the same plotly.js version as the plotly Python package). Dash's renderer names the
 * script its graphs load lazily in window._dashPlotlyJSURL; this fixes that name to the
 * vendored file, so the bundle still loads only when a chart is first drawn and never
 * holds up the page. (assets/vendor/ is served but not included as page scripts:
 * Dash(assets_path_ignore=...), dashboard/app.py.)
 */
(function () {
  "use strict";
  var url = "assets/vendor/plotly-basic.min.js";
  Object.defineProperty(window, "_dashPlotlyJSURL", {
    configurable: true,
    get: function () { return url; },
    set: function () { /* keep the vendored bundle */ }
  });
})();
