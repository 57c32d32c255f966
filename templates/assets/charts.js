// Draws the page's charts with the Vega bundle, each when it comes into view.
// Each <div class="chart-view" data-chart-spec="ID"> names a
// <script type="application/json" id="ID"> holding its Vega-Lite spec. A chart
// whose rows live in a file of their own (a map's points) names that script in
// data-chart-data; it registers the rows in window.SITEGEN_CHART_DATA under the
// chart's id (data-chart-id). Without a data file, rows may sit in a JSON block
// with id "<chart id>-data".
// The Vega bundle is not loaded by the page: this script loads it (its path,
// from the site root, is <html data-chart-library>) when the first chart comes
// into view, so the page's search, sorting and links never wait on it. Scripts
// are added as <script src> of the site itself, which the page's CSP allows and
// which work from file:// too, where fetch() does not.
// Runs under the site's Content-Security-Policy: no eval (`ast: true` makes
// Vega interpret expressions instead of compiling them to functions) and no
// injected styles (`defaultStyle: false`, tooltip `disableDefaultStyle`; the
// rules live in assets/charts.css).
(function () {
  "use strict";

  var OPTIONS = {
    ast: true,
    actions: false,
    defaultStyle: false,
    renderer: "svg",
    tooltip: { disableDefaultStyle: true, theme: "site" },
    loader: { target: "_self" }
  };
  // Below this width (CSS pixels) legends take one column and season labels slant.
  var NARROW = 560;

  var html = document.documentElement;
  var root = html.getAttribute("data-root") || "";
  var library = html.getAttribute("data-chart-library") || "";

  var loadScript = window.SITEGEN_LOAD_SCRIPT;  // site.js, loaded before this file

  function withLibrary(callback) {
    if (typeof window.vegaEmbed === "function") { callback(true); return; }
    if (!library) { callback(false); return; }
    loadScript(root + library, function () { callback(typeof window.vegaEmbed === "function"); });
  }

  function showError(view, message) {
    var note = document.createElement("p");
    note.className = "chart-error";
    note.textContent = "This chart could not be drawn (" + message + "). The data table below holds the same figures.";
    view.parentNode.insertBefore(note, view.nextSibling);
    view.classList.add("chart-failed");
  }

  // Fit a spec to a narrow view: legends in one column with labels cut to the
  // width, level axis labels slanted so they never run into each other.
  function fit(node, width) {
    if (!node || typeof node !== "object") return;
    if (Array.isArray(node)) {
      for (var i = 0; i < node.length; i++) fit(node[i], width);
      return;
    }
    var legend = node.legend;
    if (legend && typeof legend === "object" && legend.orient === "bottom") {
      legend.columns = 1;
      legend.labelLimit = Math.max(80, width - 100);
    }
    var axis = node.axis;
    if (axis && typeof axis === "object" && axis.labelAngle === 0) {
      axis.labelAngle = -40;
      axis.labelAlign = "right";
      axis.labelBaseline = "middle";
      axis.labelLimit = 100;
      axis.labelOverlap = false;  // slanted labels do not meet; none may be dropped
    }
    for (var key in node) {
      if (Object.prototype.hasOwnProperty.call(node, key) && key !== "data" && key !== "datasets") fit(node[key], width);
    }
  }

  function rowsOf(view, callback) {
    var id = view.getAttribute("data-chart-id") || "";
    var src = view.getAttribute("data-chart-data");
    if (src) {
      loadScript(src, function (failed) {
        var store = window.SITEGEN_CHART_DATA || {};
        callback(failed || !Object.prototype.hasOwnProperty.call(store, id) ? null : store[id]);
      });
      return;
    }
    var inline = id ? document.getElementById(id + "-data") : null;
    if (!inline) { callback(undefined); return; }
    try {
      callback(JSON.parse(inline.textContent));
    } catch (err) {
      callback(null);
    }
  }

  function draw(view) {
    var specId = view.getAttribute("data-chart-spec");
    var source = specId ? document.getElementById(specId) : null;
    if (!source) {
      console.error("chart: no spec element with id " + specId);
      showError(view, "its data is missing");
      return;
    }
    var spec;
    try {
      spec = JSON.parse(source.textContent);
    } catch (err) {
      console.error("chart " + specId + ": spec is not JSON", err);
      showError(view, "its data could not be read");
      return;
    }
    withLibrary(function (ready) {
      if (!ready) {
        console.error("chart: the Vega bundle did not load");
        showError(view, "the chart library did not load");
        return;
      }
      rowsOf(view, function (rows) {
        if (rows === null) {
          console.error("chart " + specId + ": its data file did not load");
          showError(view, "its data file did not load");
          return;
        }
        if (rows !== undefined) spec.data = { values: rows };
        var width = view.clientWidth || 0;
        if (width && width < NARROW) fit(spec, width);
        window.vegaEmbed(view, spec, OPTIONS).catch(function (err) {
          console.error("chart " + specId + ": " + err);
          showError(view, String(err && err.message ? err.message : err));
        });
      });
    });
  }

  function start() {
    var views = document.querySelectorAll(".chart-view[data-chart-spec]");
    if (!views.length) return;
    if (!("IntersectionObserver" in window)) {
      for (var j = 0; j < views.length; j++) draw(views[j]);
      return;
    }
    var watcher = new IntersectionObserver(function (seen) {
      for (var i = 0; i < seen.length; i++) {
        if (seen[i].isIntersecting) {
          watcher.unobserve(seen[i].target);
          draw(seen[i].target);
        }
      }
    }, { rootMargin: "300px 0px" });
    for (var k = 0; k < views.length; k++) watcher.observe(views[k]);
  }

  if (document.readyState === "loading") {
    document.addEventListener("DOMContentLoaded", start);
  } else {
    start();
  }
})();
