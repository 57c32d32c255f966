/* sitegen: place a pasted decklist in an archetype, by the rule the site sorted its own decks by.
 * Runs with no server (also from file://) and under the site's Content-Security-Policy: no eval,
 * no inline script or style. A season and leader's model is a script of the site
 * (classify/<season>/<leader>.js) that registers itself in window.SITEGEN_CLASSIFY; it is added
 * as <script src> when that leader is first asked for. Every text of the list or the data is put
 * in the page with textContent only. Only the first MAX_LINES lines of a paste are read. */
(function () {
  "use strict";

  var MAX_LINES = 2000;
  var MAX_LINE = 4096;
  var SHOWN = 20;
  var root = document.documentElement.getAttribute("data-root") || "";
  var manifest = null;
  var lookups = {};

  function byId(id) { return document.getElementById(id); }

  function el(tag, text, cls) {
    var e = document.createElement(tag);
    if (text !== undefined && text !== null) { e.textContent = String(text); }
    if (cls) { e.className = cls; }
    return e;
  }

  function shortText(text) {
    text = String(text);
    return text.length > 120 ? text.slice(0, 119) + "\u2026" : text;
  }

  /* Names in the one form the site compares them in: ends trimmed of whitespace and controls,
   * invisible format characters removed, Unicode NFC. */
  var EDGE = /^[\s\u0000-\u001f\u007f\ufeff]+|[\s\u0000-\u001f\u007f\ufeff]+$/g;
  function cleanName(text) {
    text = String(text).replace(EDGE, "");
    if (/^[\u0000-\u007f]*$/.test(text)) { return text; }
    return text.replace(/\p{Cf}/gu, "").normalize("NFC").replace(EDGE, "");
  }
  function variantKey(text) {
    return cleanName(text).split(/\s+/).join(" ").toLowerCase().normalize("NFC");
  }

  /* -- reading the paste */
  var CARD_FIRST = /^([0-9]+)[xX]?[ \t]+(.*\S)[ \t]*$/;
  var CARD_LAST = /^(.*\S)[ \t]+[xX]([0-9]+)$/;
  var HEADER = /^([A-Za-z][A-Za-z _-]*?)[ \t]*:[ \t]*(.*)$/;
  var SIDEBOARD = /^(?:#+[ \t]*)?sideboard[ \t]*:?$/i;
  var KNOWN_HEADERS = { leader: 1, season: 1, date: 1, title: 1, event: 1, player: 1, wins: 1, losses: 1 };

  function parse(text) {
    var out = { header: {}, cards: [], sideboard: 0, notes: [], unread: [], lines: 0, cut: false };
    var pos = 0;
    var n = text.length;
    var blankAfter = 0;
    var inSideboard = false;
    var blankSideboard = false;
    while (pos < n) {
      if (out.lines >= MAX_LINES) { out.cut = true; break; }
      var end = text.indexOf("\n", pos);
      if (end < 0) { end = n; }
      out.lines += 1;
      var number = out.lines;
      var long = end - pos > MAX_LINE;
      var line = text.slice(pos, long ? pos + MAX_LINE : end);
      pos = end + 1;
      if (long) {
        out.unread.push([number, line.slice(0, 60), "longer than " + MAX_LINE + " characters"]);
        continue;
      }
      if (number === 1) { line = line.replace(/^\ufeff/, ""); }
      var t = line.trim();
      if (!t) {
        if (out.cards.length && !blankAfter) { blankAfter = number; }
        continue;
      }
      if (SIDEBOARD.test(t)) {
        if (out.cards.length) { inSideboard = true; }
        continue;
      }
      if (t.charAt(0) === "#") { continue; }
      var m = CARD_FIRST.exec(t);
      var qty, name;
      if (m) { qty = m[1]; name = m[2]; } else {
        m = CARD_LAST.exec(t);
        if (m) { qty = m[2]; name = m[1]; }
      }
      if (m) {
        if (blankAfter && !inSideboard) { blankSideboard = true; inSideboard = true; }
        blankAfter = 0;
        var count = qty.length > 6 ? 1000000 : parseInt(qty, 10);
        if (inSideboard) { out.sideboard += 1; continue; }
        if (count <= 0) { out.unread.push([number, t, "no copies"]); continue; }
        out.cards.push({ line: number, qty: count, name: name });
        continue;
      }
      var h = HEADER.exec(t);
      if (h && !out.cards.length) {
        var key = h[1].split(/\s+/).join(" ").toLowerCase();
        if (KNOWN_HEADERS[key]) {
          if (!(key in out.header)) { out.header[key] = h[2].trim(); }
          continue;
        }
      }
      out.unread.push([number, t, "not a card line"]);
    }
    if (out.sideboard) {
      out.notes.push(out.sideboard + " card line(s) " + (blankSideboard ? "after a blank line below the cards were read as a sideboard" : "of the sideboard were") +
        " and left out, as the site leaves sideboards out of its decks" + (blankSideboard ? "; remove the blank line if they belong to the deck." : "."));
    }
    if (out.cut) {
      out.notes.push("Only the first " + MAX_LINES + " lines were read; a decklist is far shorter.");
    }
    return out;
  }

  /* -- the models */
  function loadScript(src, callback) {  // the shared loader of site.js, loaded before this file
    window.SITEGEN_LOAD_SCRIPT(root + src, callback);
  }

  function lookupOf(path, model) {
    if (lookups[path]) { return lookups[path]; }
    var exact = new Map();
    var loose = new Map();
    model.cards.forEach(function (c, i) {
      exact.set(c, i);
      var k = variantKey(c);
      loose.set(k, loose.has(k) ? -1 : i);
    });
    var dense = model.centres.map(function (c) {
      var w = new Float64Array(model.cards.length);
      for (var j = 0; j < c.i.length; j++) { w[c.i[j]] = c.w[j]; }
      return w;
    });
    var rates = model.centres.map(function (c) { return c.rates; });
    if (model.centres.length) { rates = rates.concat(model.other_rates); }
    rates = rates.map(function (r) {
      var w = new Float64Array(model.cards.length).fill(r.floor);
      for (var j = 0; j < r.i.length; j++) { w[r.i[j]] = r.w[j]; }
      /* copy-level log-shares: the model's base (the value most rows share), the row's own where they differ */
      var lv = new Float64Array(model.levels.count * model.cards.length).fill(model.levels.floor);
      for (var v = 0; v < model.levels.i.length; v++) { lv[model.levels.i[v]] = model.levels.w[v]; }
      for (var u = 0; u < r.levels.i.length; u++) { lv[r.levels.i[u]] = r.levels.w[u]; }
      return { w: w, b: r.b, lv: lv };
    });
    var mean = null;
    if (model.mean) {
      mean = new Float64Array(model.cards.length);
      for (var j = 0; j < model.mean.i.length; j++) { mean[model.mean.i[j]] = model.mean.w[j]; }
    }
    var tables = model.groups.map(function (g) {
      var t = new Map();
      g.table.forEach(function (row) { t.set(row[0], row); });
      return t;
    });
    lookups[path] = { exact: exact, loose: loose, dense: dense, rates: rates, mean: mean, tables: tables };
    return lookups[path];
  }

  /* numpy's round(x, 4): half to even */
  function round4(x) {
    var y = x * 10000;
    var r = Math.round(y);
    if (r - y === 0.5 && r % 2 !== 0) { r -= 1; }
    return r;
  }
  function fixed4(r) {
    var neg = r < 0;
    var s = String(Math.abs(r));
    while (s.length < 5) { s = "0" + s; }
    return (neg ? "-" : "") + s.slice(0, s.length - 4) + "." + s.slice(s.length - 4);
  }

  /* The build's rule: the deck's cards and their copies scored by each archetype's card rates and
   * the other decks' (log-likelihood and log prior); the likeliest, the first on a tie. Its distance:
   * one less the cosine similarity of its idf-weighted unit row to that archetype's centre (an
   * other deck's: to the nearest centre). */
  function place(model, look, deck) {
    var copies = new Map();
    var unknown = [];
    var renamed = [];
    deck.cards.forEach(function (c) {
      var name = cleanName(c.name);
      var i = look.exact.get(name);
      if (i === undefined) {
        var j = look.loose.get(variantKey(name));
        if (j !== undefined && j >= 0) { i = j; renamed.push([c.name, model.cards[j]]); }
      }
      if (i === undefined) { unknown.push(c.name); return; }
      copies.set(i, (copies.get(i) || 0) + c.qty);
    });
    var present = Array.from(copies.keys()).sort(function (a, b) { return a - b; });
    var sq = 0;
    for (var p = 0; p < present.length; p++) { sq += model.idf[present[p]] * model.idf[present[p]]; }
    var norm = Math.sqrt(sq);
    if (norm === 0) { norm = 1; }
    var row = present.map(function (c) { return model.idf[c] / norm; });
    function sim(w) {
      var s = 0;
      for (var q = 0; q < present.length; q++) { s += row[q] * w[present[q]]; }
      return s;
    }
    var sims = look.dense.map(sim);
    var nCards = model.cards.length;
    /* a list shorter than the season's usual deck is read as a partial list: each card it lacks
       counts as missing in proportion to its length (the build's card_rates.length_shares) */
    var share = 1;
    var total = 0;
    deck.cards.forEach(function (c) { total += c.qty; });
    if (model.length && model.length.full > 0) {
      share = Math.min(Math.max(Math.floor(model.length.steps * total / model.length.full) / model.length.steps,
                                model.length.floor), 1);
      if (share >= model.length.whole) { share = 1; }
    }
    function softplus(x) { return x > 0 ? x + Math.log1p(Math.exp(-x)) : Math.log1p(Math.exp(x)); }
    var scores = look.rates.map(function (r) {
      var s = 0;
      for (var q = 0; q < present.length; q++) { s += r.w[present[q]]; }
      s += r.b;
      if (share < 1) {  /* a card rate p read at this share: lacking the card scores log(1 - share p) */
        var gain = function (w) { var miss = -softplus(w); return Math.log1p(-share * Math.exp(w + miss)) - miss; };
        var all = 0;
        for (var j = 0; j < nCards; j++) { all += gain(r.w[j]); }
        for (var g = 0; g < present.length; g++) { all -= gain(r.w[present[g]]); }
        s += all;
      }
      for (var e = 0; e < present.length; e++) {  /* the level each card is at: 1 copy, 2 copies ... count or more */
        var level = Math.min(Math.max(Math.round(copies.get(present[e])), 1), model.levels.count);
        s += r.lv[(level - 1) * nCards + present[e]];
      }
      return s;
    });
    var likeliest = -1;
    for (var l = 0; l < scores.length; l++) { if (likeliest < 0 || scores[l] > scores[likeliest]) { likeliest = l; } }
    var best = -1;
    if (likeliest >= 0 && likeliest < sims.length) {
      best = likeliest;
    } else {
      for (var k = 0; k < sims.length; k++) { if (best < 0 || sims[k] > sims[best]) { best = k; } }
    }
    var res = { copies: copies, present: present, unknown: unknown, renamed: renamed, sims: sims, best: best,
                group: -1, why: "", distance: null, share: share, total: total };
    var nearest;
    if (best >= 0) {
      var centre = model.centres[best];
      res.distance = round4(Math.min(Math.max(1 - sims[best], 0), 2));
      if (likeliest === best && centre.to >= 0) {
        res.group = centre.to;
      } else if (likeliest === best) {
        res.why = "hidden";
      } else {
        res.why = likeliest < scores.length - 1 ? "own" : "far";
      }
    } else {
      res.why = model.status === "too-small" ? "small" : "none";
      if (look.mean) { res.distance = round4(Math.min(Math.max(1 - sim(look.mean), 0), 2)); }
    }
    if (!present.length) { res.group = -1; res.why = "unknown"; }  // nothing in it speaks for an archetype
    // The nearest published archetype other than its own, with its distance.
    var near = {};
    for (var c = 0; c < sims.length; c++) {
      var to = model.centres[c].to;
      if (to < 0 || to === res.group) { continue; }
      if (!(to in near) || sims[c] > near[to]) { near[to] = sims[c]; }
    }
    nearest = null;
    Object.keys(near).forEach(function (g) {
      if (nearest === null || near[g] > nearest.sim || (near[g] === nearest.sim && +g < nearest.group)) {
        nearest = { group: +g, sim: near[g] };
      }
    });
    res.next = nearest;
    return res;
  }

  /* -- showing the result */
  function spreadText(g) {
    if (g.median === null || g.median === undefined) { return ""; }
    return " Its own decks lie at a median distance of " + g.median.toFixed(4) + ", and 9 in 10 of them within " +
      g.p90.toFixed(4) + ".";
  }

  function link(g) {
    var a = el("a", g.name);
    a.href = root + g.href;
    return a;
  }

  function list(parent, title, items) {
    if (!items.length) { return; }
    parent.appendChild(el("h3", title));
    var ul = el("ul");
    items.slice(0, SHOWN).forEach(function (t) { ul.appendChild(el("li", t)); });
    if (items.length > SHOWN) { ul.appendChild(el("li", "\u2026 and " + (items.length - SHOWN) + " more")); }
    parent.appendChild(ul);
  }

  function pct(x) { return Math.round(x * 100) + "%"; }

  function differences(parent, model, look, res, gi, deck) {
    var g = model.groups[gi];
    var table = look.tables[gi];
    var lacks = [];
    var copiesDiffer = [];
    g.table.forEach(function (row) {
      var mine = res.copies.get(row[0]);
      if (row[1] >= 0.5 && mine === undefined) {
        lacks.push(model.cards[row[0]] + " \u2014 in " + pct(row[1]) + " of its decks, usually " + (row[3] >= 3 ? "3 or more" : row[3]) +
          (row[3] === 1 ? " copy" : " copies"));
      }
      if (row[1] >= 0.5 && mine !== undefined && Math.min(mine, 3) !== row[3]) {
        copiesDiffer.push(model.cards[row[0]] + ": " + mine + " here, usually " + (row[3] >= 3 ? "3 or more" : row[3]) +
          " (mean " + row[2].toFixed(1) + ")");
      }
    });
    var rarely = [];
    res.present.forEach(function (c) {
      var row = table.get(c);
      if (!row) {
        rarely.push(model.cards[c] + " \u2014 in fewer than " + pct(model.rare) + " of its decks");
      } else if (row[1] < 0.2) {
        rarely.push(model.cards[c] + " \u2014 in " + pct(row[1]) + " of its decks");
      }
    });
    var box = el("section", null, "classify-diff");
    box.appendChild(el("h3", "How the list differs from " + g.name));
    if (!lacks.length && !rarely.length && !copiesDiffer.length) {
      box.appendChild(el("p", "It plays every card most of its decks play, nothing they rarely play, and the usual copies."));
    }
    list(box, "Most of its decks play, this list does not", lacks);
    list(box, "This list plays, its decks rarely do", rarely);
    list(box, "Copies that differ from the usual", copiesDiffer);
    parent.appendChild(box);
  }

  function show(model, look, res, deck, season, leaderName, extra) {
    var out = byId("classify-result");
    out.textContent = "";
    var head = el("h2");
    var reason = el("p");
    var named = deck.cards.length - res.unknown.length;
    if (res.group >= 0) {
      var g = model.groups[res.group];
      head.appendChild(document.createTextNode("Archetype: "));
      head.appendChild(link(g));
      reason.textContent = "Of the " + model.groups.length + " archetype(s) of " + leaderName + " in " + season +
        " and its other decks, the cards this list plays (and at how many copies) and lacks are likeliest in this " +
        "one, by how often each one's decks play each card and at how many copies.";
    } else {
      head.textContent = "Other decks";
      var near = res.best >= 0 ? model.centres[res.best] : null;
      var nearName = near && near.to >= 0 ? model.groups[near.to].name : "";
      if (res.why === "unknown") {
        reason.textContent = "None of the list's cards is played in " + leaderName + "'s decks of " + season +
          ", so it is like none of their archetypes.";
      } else if (res.why === "small") {
        reason.textContent = "In " + season + " there were too few decks of " + leaderName + " to look for archetypes (" +
          model.decks + "); every deck of it counts as an other deck.";
      } else if (res.why === "none") {
        reason.textContent = "No archetype was found among " + leaderName + "'s decks of " + season + "; every deck counts as an other deck.";
      } else if (res.why === "own") {
        reason.textContent = "The cards it plays (and at how many copies) and lacks are likeliest in a small group of " + leaderName + "'s decks of " +
          "their own, too few in " + season + " to count as an archetype; its decks are counted with the other decks.";
      } else if (res.why === "hidden") {
        reason.textContent = "The group of decks it is likeliest in is one the site's editors do not publish as an archetype; its decks are counted with the other decks.";
      } else {
        reason.textContent = "Its nearest archetype is " + (nearName || "one not published") + ", but the cards it plays " +
          "(and at how many copies) and lacks are likelier among " + leaderName + "'s other decks and random decks of its cards than in any " +
          "archetype: it looks like none of them.";
      }
    }
    out.appendChild(head);
    out.appendChild(reason);
    if (res.distance !== null) {
      var d = el("p");
      d.appendChild(document.createTextNode("Distance: "));
      var strong = el("strong", fixed4(res.distance));
      strong.id = "classify-distance";
      d.appendChild(strong);
      var own = res.group >= 0 ? model.groups[res.group] : (res.best >= 0 && model.centres[res.best].to >= 0 ? model.groups[model.centres[res.best].to] : null);
      d.appendChild(document.createTextNode(
        (res.group >= 0 ? " (0 is its typical card choices, 1 nothing in common)." : own ? " from " + own.name + ", its nearest archetype." : ".") +
        (own ? spreadText(own) : "")));
      out.appendChild(d);
    }
    if (res.next) {
      var nx = el("p");
      nx.appendChild(document.createTextNode(res.group >= 0 ? "Nearest other archetype: " : "Nearest archetype: "));
      nx.appendChild(link(model.groups[res.next.group]));
      nx.appendChild(document.createTextNode(" at distance " + fixed4(round4(Math.min(Math.max(1 - res.next.sim, 0), 2))) + "."));
      out.appendChild(nx);
    }
    out.appendChild(el("p", "Read " + named + " of " + deck.cards.length + " card line(s) of the list, " + res.present.length +
      " different card(s) known among " + leaderName + "'s decks of " + season + "."));
    var compare = res.group >= 0 ? res.group : (res.best >= 0 ? model.centres[res.best].to : -1);
    if (compare >= 0) { differences(out, model, look, res, compare, deck); }
    var notes = extra.concat(deck.notes);
    res.renamed.forEach(function (r) { notes.push("Read '" + shortText(r[0]) + "' as '" + r[1] + "'."); });
    if (res.share < 1) {
      notes.push("This list holds " + res.total + " cards, under " + Math.round(model.length.whole * 100) + "% of the " +
        model.length.full + " cards of a usual deck of " + leaderName + " in " + season + ": it is read as a partial list " +
        "(about " + Math.round(res.share * 100) + "% of a deck), so each card it lacks counts for less.");
    }
    list(out, "Notes", notes);
    list(out, "Cards not known among " + leaderName + "'s decks of " + season + " (left out of the placement)",
      res.unknown.map(shortText));
    list(out, "Lines not read", deck.unread.map(function (u) { return "line " + u[0] + " (" + u[2] + "): " + shortText(u[1]); }));
  }

  function message(text) {
    var out = byId("classify-result");
    out.textContent = "";
    out.appendChild(el("p", text, "warning"));
  }

  function findLeader(models, wanted) {
    var names = Object.keys(models);
    if (names.indexOf(wanted) >= 0) { return wanted; }
    var key = variantKey(wanted);
    var hits = names.filter(function (n) { return variantKey(n) === key; });
    return hits.length === 1 ? hits[0] : null;
  }

  function run() {
    if (!manifest) { return; }
    var text = byId("classify-text").value || "";
    var deck = parse(text);
    var season = byId("classify-season").value;
    var models = manifest.models[season] || {};
    var names = Object.keys(models);
    var extra = [];
    var chosen = byId("classify-leader") ? byId("classify-leader").value : "";
    var leader;
    if (names.length === 1 && !byId("classify-leader")) {
      leader = names[0];
    } else if (chosen) {
      leader = findLeader(models, chosen);
      if (!leader) { message("There are no decks of " + chosen + " in season " + season + ". Pick another season or leader."); return; }
    } else if (deck.header.leader) {
      leader = findLeader(models, cleanName(deck.header.leader));
      if (!leader) {
        message("The list's Leader line names '" + shortText(deck.header.leader) + "', which has no decks in season " + season +
          ". The leaders of that season are: " + names.sort().join(", ") + ".");
        return;
      }
    } else {
      message("Name the leader: add a line 'Leader: NAME' to the list, or pick one above.");
      return;
    }
    if (deck.header.season && cleanName(deck.header.season) !== season) {
      extra.push("The list names season '" + shortText(deck.header.season) + "'; it was placed in " + season + ", as chosen above.");
    }
    if (!deck.cards.length) { message("No card lines found. Write one card per line, such as '3 Card name'."); return; }
    var path = models[leader];
    var ready = window.SITEGEN_CLASSIFY && window.SITEGEN_CLASSIFY[path];
    if (!ready) { message("Loading the model for " + leader + " in " + season + "\u2026"); }
    loadScript(path, function (failed) {
      var model = window.SITEGEN_CLASSIFY && window.SITEGEN_CLASSIFY[path];
      if (failed || !model) { message("Could not load " + path + " from this site; rebuild the site or check the file is there."); return; }
      var look = lookupOf(path, model);
      show(model, look, place(model, look, deck), deck, season, model.leader_name, extra);
      byId("classify-result").setAttribute("data-done", String(Date.now()));
    });
  }

  function setup() {
    var block = byId("classify-models");
    var button = byId("classify-go");
    if (!block || !button) { return; }
    try { manifest = JSON.parse(block.textContent); } catch (e) { message("The page's list of models cannot be read; rebuild the site."); return; }
    button.addEventListener("click", run);
    ["classify-season", "classify-leader"].forEach(function (id) {
      var s = byId(id);
      if (s) { s.addEventListener("change", function () { if (byId("classify-result").firstChild) { run(); } }); }
    });
  }

  setup();
}());
