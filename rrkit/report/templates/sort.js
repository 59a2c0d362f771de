(function () {
  "use strict";
  /* Optional: click a column heading of a sortable table to sort its rows. The page reads
     the same without this script; the buttons exist only when it runs. */
  function key(cell) {
    var v = cell.getAttribute("data-sort");
    if (v === null) { v = cell.textContent.trim(); }
    if (v === "") { return Infinity; }
    var n = Number(v);
    return isNaN(n) ? v.toLowerCase() : n;
  }
  function sortBy(table, col, th) {
    var body = table.tBodies[0];
    var rows = Array.prototype.slice.call(body.rows);
    var asc = th.getAttribute("aria-sort") !== "ascending";
    rows.sort(function (a, b) {
      var x = key(a.cells[col]), y = key(b.cells[col]);
      if (typeof x !== typeof y) { x = String(x); y = String(y); }
      return (x < y ? -1 : (x > y ? 1 : 0)) * (asc ? 1 : -1);
    });
    Array.prototype.forEach.call(table.tHead.rows[0].cells, function (c) {
      c.removeAttribute("aria-sort");
    });
    th.setAttribute("aria-sort", asc ? "ascending" : "descending");
    rows.forEach(function (r) { body.appendChild(r); });
  }
  Array.prototype.forEach.call(document.querySelectorAll("table.sortable"), function (table) {
    Array.prototype.forEach.call(table.tHead.rows[0].cells, function (th, col) {
      var b = document.createElement("button");
      b.type = "button";
      b.className = "sort";
      b.title = "Sort by this column";
      while (th.firstChild) { b.appendChild(th.firstChild); }
      th.appendChild(b);
      b.addEventListener("click", function () { sortBy(table, col, th); });
    });
    table.classList.add("sorting-on");
  });
})();
