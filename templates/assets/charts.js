// Draws every chart on the page with the Vega bundle (assets/vega-bundle.*.js,
// loaded before this file). Each <div class="chart-view" data-chart-spec="ID">
// names a <script type="application/json" id="ID"> holding its Vega-Lite spec.
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
    tooltip: { disableDefaultStyle: true, theme: "site" }
  };

  function showError(view, message) {
    var note = document.createElement("p");
    note.className = "chart-error";
    note.textContent = "This chart could not be drawn (" + message + "). The data table below holds the same figures.";
    view.parentNode.insertBefore(note, view.nextSibling);
    view.classList.add("chart-failed");
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
    window.vegaEmbed(view, spec, OPTIONS).catch(function (err) {
      console.error("chart " + specId + ": " + err);
      showError(view, String(err && err.message ? err.message : err));
    });
  }

  function drawAll() {
    var views = document.querySelectorAll(".chart-view[data-chart-spec]");
    if (!views.length) return;
    if (typeof window.vegaEmbed !== "function") {
      console.error("chart: the Vega bundle did not load");
      for (var i = 0; i < views.length; i++) showError(views[i], "the chart library did not load");
      return;
    }
    for (var j = 0; j < views.length; j++) draw(views[j]);
  }

  if (document.readyState === "loading") {
    document.addEventListener("DOMContentLoaded", drawAll);
  } else {
    drawAll();
  }
})();
