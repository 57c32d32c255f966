/* sitegen site script: the search box and sortable tables.
 * Runs with no server (also from file://) and under a strict Content-Security-Policy:
 * no eval, no inline styles; it only adds elements, classes and attributes. */
(function () {
  "use strict";

  var root = document.documentElement.getAttribute("data-root") || "";

  /* -- one loader of scripts for the page's other scripts (charts.js: the Vega bundle and chart
   * data files; classify.js: the models): each src is added once, and every caller hears when it
   * has loaded or failed. Script elements, not fetch(), which file:// refuses. */
  var loaded = {};  // src -> {done, failed, waiting: [callback]}
  window.SITEGEN_LOAD_SCRIPT = function (src, callback) {
    var entry = loaded[src];
    if (entry && entry.done) { callback(entry.failed); return; }
    if (entry) { entry.waiting.push(callback); return; }
    entry = loaded[src] = { done: false, failed: false, waiting: [callback] };
    var el = document.createElement("script");
    el.src = src;
    function finish(failed) {
      entry.done = true;
      entry.failed = failed;
      var waiting = entry.waiting;
      entry.waiting = [];
      for (var i = 0; i < waiting.length; i++) { waiting[i](failed); }
    }
    el.onload = function () { finish(false); };
    el.onerror = function () { finish(true); };
    document.body.appendChild(el);
  };

  /* -- search: the index is a global set by search-index.js (fetch() is refused on file://).
   * The box is a combobox with a list popup (WAI-ARIA Authoring Practices, combobox pattern):
   * typing opens the list, Down/Up move through it (aria-activedescendant), Enter opens the
   * chosen page (the first when none is chosen), Escape closes the list (and clears the box
   * when it is already closed), leaving the box closes it. */
  function fold(text) {
    return String(text).normalize("NFKD").replace(/[\u0300-\u036f]/g, "").toLowerCase();
  }

  /* Most results listed per kind of page (index rank), and in all. */
  var PER_RANK = [8, 4, 4, 8];
  var MOST = 20;

  function setupSearch() {
    var box = document.getElementById("site-search-box");
    var list = document.getElementById("site-search-results");
    var status = document.getElementById("site-search-status");
    var index = window.SITEGEN_SEARCH;
    if (!box || !list || !index || !index.entries) { return; }
    var entries = index.entries.map(function (e) {
      var aliases = e.a || [];
      return { name: e.n, kind: e.k, path: e.p, detail: e.d, rank: typeof e.r === "number" ? e.r : 3,
               aliases: aliases, own: fold(e.n), others: aliases.map(fold), key: fold([e.n, e.d].concat(aliases).join(" ")) };
    });
    var shown = [];
    var active = -1;

    box.setAttribute("role", "combobox");
    box.setAttribute("aria-autocomplete", "list");
    box.setAttribute("aria-expanded", "false");
    box.setAttribute("aria-controls", list.id);
    list.setAttribute("role", "listbox");
    list.setAttribute("aria-label", "Pages found");
    list.hidden = true;

    /* 0: the name starts with the words; 1: a word of the name does; 2: a former name matches; 3: elsewhere */
    function closeness(e, text) {
      if (e.own.indexOf(text) === 0) { return 0; }
      if ((" " + e.own).indexOf(" " + text) !== -1) { return 1; }
      for (var i = 0; i < e.others.length; i++) { if (e.others[i].indexOf(text) !== -1) { return 2; } }
      return 3;
    }

    function setActive(i) {
      var options = list.children;
      if (active >= 0 && options[active]) {
        options[active].setAttribute("aria-selected", "false");
        options[active].classList.remove("active");
      }
      active = i;
      if (active >= 0 && options[active]) {
        options[active].setAttribute("aria-selected", "true");
        options[active].classList.add("active");
        box.setAttribute("aria-activedescendant", options[active].id);
        if (options[active].scrollIntoView) { options[active].scrollIntoView({ block: "nearest" }); }
      } else {
        box.removeAttribute("aria-activedescendant");
      }
    }

    function close() {
      setActive(-1);
      list.hidden = true;
      box.setAttribute("aria-expanded", "false");
    }

    function open() {
      if (!shown.length) { close(); return; }
      list.hidden = false;
      box.setAttribute("aria-expanded", "true");
    }

    function go(e) { window.location.href = root + e.path; }  /* paths are relative to the site root */

    function show() {
      var text = fold(box.value).trim();
      var words = text.split(/\s+/).filter(Boolean);
      while (list.firstChild) { list.removeChild(list.firstChild); }
      shown = [];
      active = -1;
      box.removeAttribute("aria-activedescendant");
      if (!words.length) { status.textContent = ""; close(); return; }
      var hits = entries.filter(function (e) {
        return words.every(function (w) { return e.key.indexOf(w) !== -1; });
      });
      hits.forEach(function (e) { e.close = closeness(e, text); });
      hits.sort(function (a, b) {
        return a.rank - b.rank || a.close - b.close || a.name.localeCompare(b.name);
      });
      var taken = [0, 0, 0, 0];
      hits.forEach(function (e) {
        var r = Math.min(Math.max(e.rank, 0), 3);
        if (shown.length < MOST && taken[r] < PER_RANK[r]) { taken[r] += 1; shown.push(e); }
      });
      shown.forEach(function (e, i) {
        var li = document.createElement("li");
        li.id = "site-search-option-" + i;
        li.setAttribute("role", "option");
        li.setAttribute("aria-selected", "false");
        var name = document.createElement("span");
        name.className = "name";
        name.textContent = e.name;       /* text, never markup */
        li.appendChild(name);
        var former = e.close === 2 ? e.aliases.filter(function (n) { return fold(n).indexOf(text) !== -1; })[0] : "";
        var kind = document.createElement("span");
        kind.className = "kind";
        kind.textContent = " " + e.kind + (e.detail ? ", " + e.detail : "") + (former ? ", formerly " + former : "");
        li.appendChild(kind);
        li.addEventListener("mousedown", function (ev) { ev.preventDefault(); });  /* keep the focus in the box */
        li.addEventListener("click", function () { go(e); });
        list.appendChild(li);
      });
      status.textContent = hits.length ? (hits.length > shown.length ? shown.length + " of " + hits.length + " matches shown" : hits.length + (hits.length === 1 ? " match" : " matches")) : "Nothing found";
      open();
    }

    box.addEventListener("input", show);
    box.addEventListener("focus", function () { if (box.value.trim()) { show(); } });
    box.addEventListener("blur", close);
    box.addEventListener("keydown", function (ev) {
      var expanded = !list.hidden;
      if (ev.key === "ArrowDown" || ev.key === "Down") {
        ev.preventDefault();
        if (!expanded) { show(); if (shown.length) { setActive(0); } return; }
        setActive(active + 1 < shown.length ? active + 1 : 0);
      } else if (ev.key === "ArrowUp" || ev.key === "Up") {
        ev.preventDefault();
        if (!expanded) { show(); if (shown.length) { setActive(shown.length - 1); } return; }
        setActive(active > 0 ? active - 1 : shown.length - 1);
      } else if (ev.key === "Enter") {
        if (expanded && shown.length) {
          ev.preventDefault();
          go(shown[active >= 0 ? active : 0]);
        }
      } else if (ev.key === "Escape" || ev.key === "Esc") {
        if (expanded) { ev.preventDefault(); close(); } else if (box.value) { ev.preventDefault(); box.value = ""; show(); }
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

  /* -- wide tables: a line under each table wider than its box says more columns lie sideways */
  function markWideTables() {
    Array.prototype.forEach.call(document.querySelectorAll(".table-scroll"), function (box) {
      var hint = box.nextElementSibling && box.nextElementSibling.classList.contains("scroll-hint") ? box.nextElementSibling : null;
      var wide = box.clientWidth > 0 && box.scrollWidth > box.clientWidth + 1;
      if (wide && !hint) {
        hint = document.createElement("p");
        hint.className = "scroll-hint";
        hint.textContent = "More columns to the right: scroll the table sideways.";
        box.parentNode.insertBefore(hint, box.nextSibling);
      }
      if (hint) { hint.hidden = !wide; }
    });
  }

  function setupWideTables() {
    markWideTables();
    var waiting = false;
    window.addEventListener("resize", function () {
      if (waiting) { return; }
      waiting = true;
      window.setTimeout(function () { waiting = false; markWideTables(); }, 200);
    });
    /* a table inside a closed <details> has no width until it is opened */
    Array.prototype.forEach.call(document.querySelectorAll("details"), function (d) {
      d.addEventListener("toggle", markWideTables);
    });
  }

  function start() { setupSearch(); setupTables(); setupWideTables(); }
  if (document.readyState === "loading") {
    document.addEventListener("DOMContentLoaded", start);
  } else {
    start();
  }
}());
