/* thermofolio site script: sortable tables and the offline search. No network access:
   the search index is the classic script search-index.js, which sets
   window.THERMOFOLIO_SEARCH (browsers refuse to fetch JSON from file:// pages). */
(function () {
  "use strict";

  /* Sortable tables: <th><button> headings, aria-sort on the sorted column. */
  function sortValue(cell, type) {
    var raw = cell.getAttribute("data-sort");
    if (raw === null) { raw = cell.textContent; }
    if (type === "number") {
      var n = parseFloat(raw);
      return isNaN(n) ? null : n;
    }
    return raw.toLowerCase();
  }

  function compare(a, b) {
    if (a === b) { return 0; }
    if (a === null) { return 1; }
    if (b === null) { return -1; }
    return a < b ? -1 : 1;
  }

  function sortBy(table, index, th) {
    var ascending = th.getAttribute("aria-sort") !== "ascending";
    var type = th.getAttribute("data-type") || "text";
    var body = table.tBodies[0];
    var rows = Array.prototype.slice.call(body.rows);
    var keyed = rows.map(function (row, i) {
      return { row: row, key: sortValue(row.cells[index], type), i: i };
    });
    keyed.sort(function (x, y) {
      var c = compare(x.key, y.key);
      if (c === 0) { return x.i - y.i; }
      if (x.key === null || y.key === null) { return c; }
      return ascending ? c : -c;
    });
    keyed.forEach(function (k) { body.appendChild(k.row); });
    Array.prototype.forEach.call(table.tHead.rows[0].cells, function (h) {
      h.setAttribute("aria-sort", "none");
    });
    th.setAttribute("aria-sort", ascending ? "ascending" : "descending");
  }

  Array.prototype.forEach.call(document.querySelectorAll("table.sortable"), function (table) {
    Array.prototype.forEach.call(table.tHead.rows[0].cells, function (th, index) {
      var button = th.querySelector("button");
      if (button) {
        button.addEventListener("click", function () { sortBy(table, index, th); });
      }
    });
  });

  /* Search: the query is folded like generator.formula.search_key (lower case,
     sub- and superscript digits and signs to ASCII, middle dots to "*", carets and
     white space removed), so CO2, co2 and CO₂ all find carbon dioxide. */
  var FOLD = {
    "₀": "0", "₁": "1", "₂": "2", "₃": "3", "₄": "4", "₅": "5", "₆": "6", "₇": "7", "₈": "8",
    "₉": "9", "⁰": "0", "¹": "1", "²": "2", "³": "3", "⁴": "4", "⁵": "5", "⁶": "6", "⁷": "7",
    "⁸": "8", "⁹": "9", "⁺": "+", "₊": "+", "⁻": "-", "₋": "-", "−": "-", "·": "*", "•": "*",
    "∙": "*", "⋅": "*", "^": ""
  };

  function fold(text) {
    var out = "";
    for (var i = 0; i < text.length; i++) {
      var c = text.charAt(i);
      out += Object.prototype.hasOwnProperty.call(FOLD, c) ? FOLD[c] : c;
    }
    return out.toLowerCase().replace(/\s+/g, "");
  }

  function entries(data) {
    var list = [];
    (data.species || []).forEach(function (s) {
      list.push({
        kind: "species", url: s.url, title: s.name, detail: s.formula + "(" + s.phase + ")",
        exact: [s.key, fold(s.name), fold(s.cas || "")],
        fields: [s.key, fold(s.name), fold(s.id), fold(s.cas || "")].concat(
          (s.aliases || []).map(fold))
      });
    });
    (data.reactions || []).forEach(function (r) {
      list.push({
        kind: "reaction", url: r.url, title: r.name, detail: r.equation,
        exact: [fold(r.name)], fields: [fold(r.name), fold(r.id), r.key]
      });
    });
    return list;
  }

  function rank(entry, q) {
    if (entry.exact.indexOf(q) >= 0) { return 0; }
    var best = -1;
    entry.fields.forEach(function (f) {
      var at = f.indexOf(q);
      if (at === 0 && (best < 0 || best > 1)) { best = 1; }
      else if (at > 0 && best < 0) { best = 2; }
    });
    return best;
  }

  var input = document.getElementById("q");
  var data = window.THERMOFOLIO_SEARCH;
  if (input && data) {
    var list = entries(data);
    var results = document.getElementById("search-results");
    var status = document.getElementById("search-status");
    var shown = [];
    var update = function () {
      var q = fold(input.value);
      results.textContent = "";
      shown = [];
      if (!q) { status.textContent = ""; return; }
      var hits = [];
      list.forEach(function (e, i) {
        var r = rank(e, q);
        if (r >= 0) { hits.push({ e: e, r: r, i: i }); }
      });
      hits.sort(function (a, b) { return a.r - b.r || a.i - b.i; });
      hits.slice(0, 40).forEach(function (h) {
        var li = document.createElement("li");
        var a = document.createElement("a");
        a.href = h.e.url;
        a.textContent = h.e.title;
        var small = document.createElement("span");
        small.className = "result-detail";
        small.textContent = " " + h.e.kind + " · " + h.e.detail;
        li.appendChild(a);
        li.appendChild(small);
        results.appendChild(li);
        shown.push(h.e.url);
      });
      status.textContent = hits.length === 0 ? "No match." :
        hits.length === 1 ? "1 match; press Enter to open it." : hits.length + " matches.";
    };
    input.addEventListener("input", update);
    input.addEventListener("keydown", function (ev) {
      if (ev.key === "Enter" && shown.length === 1) {
        ev.preventDefault();
        window.location.href = shown[0];
      }
    });
    update();
  }
})();
