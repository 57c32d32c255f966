/* sitegen site script: the search box and sortable tables.
 * Runs with no server (also from file://) and under a strict Content-Security-Policy:
 * no eval, no inline styles; it only adds elements, classes and attributes. */
(function () {
  "use strict";

  var root = document.documentElement.getAttribute("data-root") || "";

  /* -- search: the index is a global set by search-index.js (fetch() is refused on file://) */
  function fold(text) {
    return String(text).normalize("NFKD").replace(/[\u0300-\u036f]/g, "").toLowerCase();
  }

  function setupSearch() {
    var box = document.getElementById("site-search-box");
    var list = document.getElementById("site-search-results");
    var status = document.getElementById("site-search-status");
    var index = window.SITEGEN_SEARCH;
    if (!box || !list || !index || !index.entries) { return; }
    var entries = index.entries.map(function (e) {
      return { name: e.n, kind: e.k, path: e.p, detail: e.d, key: fold(e.n + " " + e.d) };
    });
    function show() {
      var words = fold(box.value).split(/\s+/).filter(Boolean);
      while (list.firstChild) { list.removeChild(list.firstChild); }
      if (!words.length) { status.textContent = ""; return; }
      var hits = entries.filter(function (e) {
        return words.every(function (w) { return e.key.indexOf(w) !== -1; });
      });
      hits.sort(function (a, b) {
        var pa = fold(a.name).indexOf(words[0]) === 0 ? 0 : 1;
        var pb = fold(b.name).indexOf(words[0]) === 0 ? 0 : 1;
        return pa - pb || a.name.localeCompare(b.name);
      });
      hits.slice(0, 20).forEach(function (e) {
        var li = document.createElement("li");
        var a = document.createElement("a");
        a.href = root + e.path;          /* paths are relative to the site root */
        a.textContent = e.name;          /* text, never markup */
        var kind = document.createElement("span");
        kind.className = "kind";
        kind.textContent = " " + e.kind + (e.detail ? ", " + e.detail : "");
        li.appendChild(a);
        li.appendChild(kind);
        list.appendChild(li);
      });
      status.textContent = hits.length ? (hits.length > 20 ? "First 20 of " + hits.length + " matches" : hits.length + (hits.length === 1 ? " match" : " matches")) : "Nothing found";
    }
    box.addEventListener("input", show);
    box.addEventListener("keydown", function (ev) {
      if (ev.key === "Enter") {
        var first = list.querySelector("a");
        if (first) { window.location.href = first.href; }
      } else if (ev.key === "Escape") {
        box.value = ""; show();
      }
    });
  }

  /* -- sortable tables: <table class="sortable">, values in data-sort attributes */
  function cellValue(row, col) {
    var cell = row.cells[col];
    if (!cell) { return ""; }
    var v = cell.getAttribute("data-sort");
    return v === null ? cell.textContent.trim() : v;
  }

  function compare(a, b) {
    /* empty values (e.g. small-sample win rates) always sort last */
    if (a === "" || b === "") { return a === b ? 0 : (a === "" ? 1 : -1); }
    var na = Number(a), nb = Number(b);
    if (!isNaN(na) && !isNaN(nb)) { return na - nb; }
    return a.localeCompare(b);
  }

  function sortTable(table, col, button) {
    var body = table.tBodies[0];
    if (!body) { return; }
    var th = button.parentNode;
    var descending = th.getAttribute("aria-sort") !== "descending";
    Array.prototype.forEach.call(table.querySelectorAll("thead th"), function (h) { h.removeAttribute("aria-sort"); });
    th.setAttribute("aria-sort", descending ? "descending" : "ascending");
    var rows = Array.prototype.slice.call(body.rows);
    rows.forEach(function (r, i) { r.sortIndex = i; });
    rows.sort(function (x, y) {
      var a = cellValue(x, col), b = cellValue(y, col);
      var c = (a === "" || b === "") ? compare(a, b) : (descending ? -compare(a, b) : compare(a, b));
      return c || x.sortIndex - y.sortIndex;
    });
    rows.forEach(function (r) { body.appendChild(r); });
  }

  function setupTables() {
    Array.prototype.forEach.call(document.querySelectorAll("table.sortable"), function (table) {
      var head = table.tHead && table.tHead.rows[0];
      if (!head) { return; }
      Array.prototype.forEach.call(head.cells, function (th, col) {
        var button = document.createElement("button");
        button.type = "button";
        button.className = "sort-button";
        while (th.firstChild) { button.appendChild(th.firstChild); }
        th.appendChild(button);
        button.addEventListener("click", function () { sortTable(table, col, button); });
      });
    });
  }

  function start() { setupSearch(); setupTables(); }
  if (document.readyState === "loading") {
    document.addEventListener("DOMContentLoaded", start);
  } else {
    start();
  }
}());
