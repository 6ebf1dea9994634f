/* valve-audit report: sort, filter and search the ranked table. Plain JavaScript, no network.
   Without scripting the page reads and prints as a static report (the controls stay hidden). */
(function () {
  "use strict";
  var table = document.getElementById("ranked-table");
  if (!table) { return; }
  var body = table.tBodies[0];
  var rows = Array.prototype.slice.call(body.rows);
  var count = document.getElementById("f-count");
  var pick = {
    severity: document.getElementById("f-severity"),
    area: document.getElementById("f-area"),
    family: document.getElementById("f-family"),
    tag: document.getElementById("f-tag")
  };

  function keyOf(cell, numeric) {
    var raw = cell.hasAttribute("data-key") ? cell.getAttribute("data-key") : cell.textContent.trim();
    if (!numeric) { return raw.toLowerCase(); }
    if (raw === "") { return null; }
    var x = parseFloat(raw);
    return isNaN(x) ? null : x;
  }

  function sortBy(th, index) {
    var numeric = th.getAttribute("data-type") === "num";
    var ascending = th.getAttribute("aria-sort") !== "ascending";
    Array.prototype.forEach.call(table.tHead.rows[0].cells, function (c) { c.removeAttribute("aria-sort"); });
    th.setAttribute("aria-sort", ascending ? "ascending" : "descending");
    var keyed = rows.map(function (r, i) { return { row: r, key: keyOf(r.cells[index], numeric), i: i }; });
    keyed.sort(function (a, b) {
      if (a.key === b.key) { return a.i - b.i; }
      if (a.key === null) { return 1; }          /* blanks last, whichever way */
      if (b.key === null) { return -1; }
      var d = a.key < b.key ? -1 : 1;
      return ascending ? d : -d;
    });
    rows = keyed.map(function (k) { return k.row; });
    rows.forEach(function (r) { body.appendChild(r); });
  }

  function filter() {
    var sev = pick.severity.value, area = pick.area.value, fam = pick.family.value;
    var tag = pick.tag.value.trim().toLowerCase();
    var shown = 0;
    rows.forEach(function (r) {
      var ok = (!sev || r.getAttribute("data-severity") === sev)
        && (!area || r.getAttribute("data-area") === area)
        && (!fam || (" " + r.getAttribute("data-families") + " ").indexOf(" " + fam + " ") >= 0)
        && (!tag || r.getAttribute("data-tag").toLowerCase().indexOf(tag) >= 0);
      r.hidden = !ok;
      if (ok) { shown += 1; }
    });
    count.textContent = "Showing " + shown + " of " + rows.length + " valves";
  }

  Array.prototype.forEach.call(table.tHead.rows[0].cells, function (th, index) {
    th.tabIndex = 0;
    th.title = "sort by " + th.textContent;
    th.addEventListener("click", function () { sortBy(th, index); });
    th.addEventListener("keydown", function (e) {
      if (e.key === "Enter" || e.key === " ") { e.preventDefault(); sortBy(th, index); }
    });
  });
  ["severity", "area", "family"].forEach(function (k) { pick[k].addEventListener("change", filter); });
  pick.tag.addEventListener("input", filter);
  filter();
})();
