// lopsided leaderboard site: sortable and filterable tables and the copy button. Every table is complete
// and in a sensible order without this script; it only adds controls.
(function () {
  "use strict";

  function sortKey(cell, numeric) {
    const raw = cell && cell.dataset.value !== undefined ? cell.dataset.value : (cell ? cell.textContent.trim() : "");
    if (!numeric) return raw === "" ? null : raw;
    const value = parseFloat(raw);
    return Number.isFinite(value) ? value : null;
  }

  function compareKeys(a, b, numeric) {
    return numeric ? a - b : a.localeCompare(b, undefined, { numeric: true, sensitivity: "base" });
  }

  function sortBy(table, th, index) {
    const numeric = th.dataset.type === "number";
    const order = th.getAttribute("aria-sort") === "ascending" ? "descending" : "ascending";
    for (const other of th.parentNode.cells) other.removeAttribute("aria-sort");
    th.setAttribute("aria-sort", order);
    const sign = order === "ascending" ? 1 : -1;
    const body = table.tBodies[0];
    const keyed = Array.from(body.rows, (row, position) => [sortKey(row.cells[index], numeric), position, row]);
    keyed.sort((a, b) => {
      if (a[0] === null || b[0] === null) {            // missing values last in both directions
        return (a[0] === null) - (b[0] === null) || a[1] - b[1];
      }
      return sign * compareKeys(a[0], b[0], numeric) || a[1] - b[1];
    });
    body.append(...keyed.map((k) => k[2]));
  }

  function makeSortable(table) {
    if (!table.tHead || !table.tBodies.length) return;
    Array.from(table.tHead.rows[0].cells).forEach((th, index) => {
      const button = document.createElement("button");
      button.type = "button";
      button.className = "sort";
      button.title = "Sort by this column";
      while (th.firstChild) button.appendChild(th.firstChild);
      th.appendChild(button);
      button.addEventListener("click", () => sortBy(table, th, index));
    });
  }

  const FILTER_LABELS = { band: "imbalance band" };

  function makeFilters(table) {
    const keys = (table.dataset.filters || "").split(/\s+/).filter(Boolean);
    const rows = Array.from(table.tBodies[0] ? table.tBodies[0].rows : []);
    const chosen = {};
    const bar = document.createElement("div");
    bar.className = "filters";
    const count = document.createElement("span");
    count.className = "count";
    count.setAttribute("aria-live", "polite");
    const selects = [];

    function apply() {
      let shown = 0;
      for (const row of rows) {
        const keep = keys.every((key) => !chosen[key] || row.dataset[key] === chosen[key]);
        row.hidden = !keep;
        shown += keep ? 1 : 0;
      }
      count.textContent = shown === rows.length ? `all ${rows.length} rows` : `${shown} of ${rows.length} rows`;
    }

    for (const key of keys) {
      const values = [...new Set(rows.map((row) => row.dataset[key]).filter((v) => v))];
      if (values.length < 2) continue;
      const label = document.createElement("label");
      label.append(FILTER_LABELS[key] || key);
      const select = document.createElement("select");
      select.add(new Option(`all (${values.length})`, ""));
      for (const value of values) select.add(new Option(value, value));
      select.addEventListener("change", () => { chosen[key] = select.value; apply(); });
      label.append(select);
      bar.append(label);
      selects.push(select);
    }
    if (!selects.length) return;
    const reset = document.createElement("button");
    reset.type = "button";
    reset.textContent = "Show all";
    reset.addEventListener("click", () => {
      for (const select of selects) select.value = "";
      for (const key of keys) chosen[key] = "";
      apply();
    });
    bar.append(reset, count);
    const anchor = table.closest(".scroll") || table;
    anchor.parentNode.insertBefore(bar, anchor);
    apply();
  }

  function makeCopyButton(button) {
    const target = document.getElementById(button.dataset.copy);
    const status = button.parentNode.querySelector(".copy-status");
    if (!target) return;
    button.hidden = false;
    button.addEventListener("click", async () => {
      try {
        await navigator.clipboard.writeText(target.textContent);
        if (status) status.textContent = "Copied.";
      } catch (refused) {                               // no clipboard access (some browsers, file pages)
        const range = document.createRange();
        range.selectNodeContents(target);
        const selection = window.getSelection();
        selection.removeAllRanges();
        selection.addRange(range);
        if (status) status.textContent = "Selected: press Ctrl+C (Cmd+C on a Mac) to copy.";
      }
    });
  }

  document.querySelectorAll("table.sortable").forEach(makeSortable);
  document.querySelectorAll("table[data-filters]").forEach(makeFilters);
  document.querySelectorAll("button[data-copy]").forEach(makeCopyButton);
})();
