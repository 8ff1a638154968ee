/*
 * Periplus: sortable tables and their scrolling wrappers (progressive enhancement).
 *
 * Every <table class="sortable"> gets a <button class="sort"> in each
 * <th scope="col"> of its <thead>. Clicking a column's button sorts the rows
 * of each <tbody> by that column: ascending first, then descending, and a
 * third click restores the rows' original order (the order the page was
 * written in), then ascending again. The sorted column's header carries
 * aria-sort; no header has it while the rows are in their original order.
 * A note after each such table says so.
 *
 * Keys: a body cell's data-value if present, else its text. Header cells say
 * how to compare with data-type="int" (exact, with BigInt: numbers may have
 * thousands of digits and a minus sign), data-type="abs" (integers by
 * absolute value; of n and -n the positive first when ascending, as the
 * record names a cycle by its positive member when both are members; the
 * descending order is the exact reverse) or data-type="text" (the default;
 * localeCompare with numeric collation). Cells whose int or abs key is not a
 * whole number (e.g. a dash for "does not apply") sort after all numbers in
 * both directions.
 *
 * The sort is stable: rows that tie keep their previous relative order
 * (each sort breaks ties by the row's position before that sort, and each
 * row's original position is kept in data-sort-index).
 *
 * Wrappers: a <div class="table-wrap"> lets a wide table scroll sideways (and
 * a <div class="equation"> a long equation). The
 * page writes each as a labelled region (role="region", aria-label, and
 * tabindex="0" so that a keyboard can scroll it); once the page has loaded,
 * and whenever the window is resized, a wrapper whose table fits is made a
 * plain box again (no tab stop, no region), and one that scrolls a region.
 *
 * Without JavaScript the tables are left as written. Plain ES2020, no
 * dependencies; the only global is the namespace window.Periplus.sort.
 */
(function (root) {
  'use strict';

  /* ---------------------------------------------------------------- */
  /* Pure helpers (no DOM)                                             */
  /* ---------------------------------------------------------------- */

  // Spaces that may appear inside a number as digit-group separators.
  var GROUPING = /[\s\u00a0\u2009\u202f\u200a_,]/g;

  /**
   * Parse a decimal integer string (any length, optional sign, optional
   * grouping spaces, commas or underscores; U+2212 minus accepted).
   * Returns a BigInt, or null when the text is not a whole number.
   */
  function parseDecimal(text) {
    if (text === null || text === undefined) {
      return null;
    }
    var s = String(text).replace(GROUPING, '').replace(/\u2212/g, '-');
    if (s.charAt(0) === '+') {
      s = s.slice(1);
    }
    if (!/^-?[0-9]+$/.test(s)) {
      return null;
    }
    return BigInt(s);
  }

  /** Three-way comparison of two BigInts (or nulls; null sorts last). */
  function compareBig(a, b) {
    if (a === null || b === null) {
      if (a === b) {
        return 0;
      }
      return a === null ? 1 : -1;
    }
    return a < b ? -1 : a > b ? 1 : 0;
  }

  /**
   * Three-way comparison of two BigInts by absolute value; of n and -n the
   * positive first (nulls last, as compareBig).
   */
  function compareAbs(a, b) {
    if (a === null || b === null) {
      return compareBig(a, b);
    }
    var c = compareBig(a < 0n ? -a : a, b < 0n ? -b : b);
    return c !== 0 ? c : compareBig(b, a);
  }

  /** Three-way comparison of two decimal strings, exactly. */
  function compareDecimalStrings(a, b) {
    return compareBig(parseDecimal(a), parseDecimal(b));
  }

  var collator = null;
  function compareText(a, b) {
    if (collator === null) {
      try {
        collator = new Intl.Collator(undefined, { numeric: true });
      } catch (e) {
        collator = false;
      }
    }
    if (collator) {
      return collator.compare(a, b);
    }
    return String(a).localeCompare(String(b), undefined, { numeric: true });
  }

  /**
   * Sort an array of items {key, missing, pos} for one column.
   * type: 'int', 'abs' or 'text'; direction: 'ascending' or 'descending'.
   * Ties (and the relative order among missing keys) follow pos, ascending,
   * in both directions, so the sort is stable and deterministic.
   * Returns a new array; the input is not modified.
   */
  function sortItems(items, type, direction) {
    var sign = direction === 'descending' ? -1 : 1;
    var copy = items.slice();
    copy.sort(function (x, y) {
      var c;
      if (type === 'int' || type === 'abs') {
        if (x.key === null || y.key === null) {
          // Non-numbers go last whatever the direction, among themselves in text order.
          c = compareBig(x.key, y.key);
          if (c === 0 && x.key === null) {
            c = compareText(x.text, y.text);
          }
        } else {
          c = sign * (type === 'abs' ? compareAbs(x.key, y.key) : compareBig(x.key, y.key));
        }
      } else {
        c = sign * compareText(x.key, y.key);
      }
      return c !== 0 ? c : x.pos - y.pos;
    });
    return copy;
  }

  /** Key of a cell's sort value text for a column type. */
  function makeKey(text, type) {
    if (type === 'int' || type === 'abs') {
      return parseDecimal(text);
    }
    return String(text).replace(/\s+/g, ' ').trim();
  }

  /* ---------------------------------------------------------------- */
  /* DOM                                                               */
  /* ---------------------------------------------------------------- */

  function span(cell) {
    var n = parseInt(cell.getAttribute('colspan') || '1', 10);
    return n > 0 ? n : 1;
  }

  /** Column index of a cell in its row, counting colspans. */
  function columnOf(cell) {
    var index = 0;
    var cells = cell.parentNode.children;
    for (var i = 0; i < cells.length; i++) {
      if (cells[i] === cell) {
        return index;
      }
      index += span(cells[i]);
    }
    return -1;
  }

  /** The cell of row covering column index, or null. */
  function cellAt(row, column) {
    var index = 0;
    var cells = row.children;
    for (var i = 0; i < cells.length; i++) {
      var c = cells[i];
      var n = span(c);
      if (column < index + n) {
        return c;
      }
      index += n;
    }
    return null;
  }

  function cellValue(cell) {
    if (!cell) {
      return '';
    }
    if (cell.hasAttribute('data-value')) {
      return cell.getAttribute('data-value');
    }
    return cell.textContent || '';
  }

  function bodyRows(tbody) {
    var rows = [];
    var children = tbody.children;
    for (var i = 0; i < children.length; i++) {
      if (children[i].tagName === 'TR') {
        rows.push(children[i]);
      }
    }
    return rows;
  }

  /** Number each row of the body with its original position (once). */
  function markOriginalOrder(tbody) {
    bodyRows(tbody).forEach(function (row, pos) {
      if (!row.hasAttribute('data-sort-index')) {
        row.setAttribute('data-sort-index', String(pos));
      }
    });
  }

  function placeRows(tbody, items) {
    var fragment = tbody.ownerDocument.createDocumentFragment();
    items.forEach(function (item) {
      fragment.appendChild(item.row);
    });
    tbody.appendChild(fragment);
  }

  function sortBody(tbody, column, type, direction) {
    markOriginalOrder(tbody);
    var rows = bodyRows(tbody);
    if (rows.length < 2) {
      return;
    }
    var items = rows.map(function (row, pos) {
      var text = cellValue(cellAt(row, column));
      return { row: row, pos: pos, text: text, key: makeKey(text, type) };
    });
    placeRows(tbody, sortItems(items, type, direction));
  }

  /** Put the body's rows back in the order the page was written in. */
  function restoreBody(tbody) {
    markOriginalOrder(tbody);
    var items = bodyRows(tbody).map(function (row) {
      return { row: row, pos: parseInt(row.getAttribute('data-sort-index'), 10) };
    });
    items.sort(function (x, y) {
      return x.pos - y.pos;
    });
    placeRows(tbody, items);
  }

  /**
   * The state after a click on a header whose aria-sort is `current`:
   * none -> ascending -> descending -> none (the original order).
   */
  function nextState(current) {
    if (current === 'ascending') {
      return 'descending';
    }
    if (current === 'descending') {
      return 'none';
    }
    return 'ascending';
  }

  function sortTable(table, th, type) {
    var state = nextState(th.getAttribute('aria-sort'));
    var column = columnOf(th);
    if (column < 0) {
      return;
    }
    var headers = table.querySelectorAll('thead th');
    for (var i = 0; i < headers.length; i++) {
      headers[i].removeAttribute('aria-sort');
    }
    if (state !== 'none') {
      th.setAttribute('aria-sort', state);
    }
    var bodies = table.tBodies;
    for (var b = 0; b < bodies.length; b++) {
      if (state === 'none') {
        restoreBody(bodies[b]);
      } else {
        sortBody(bodies[b], column, type, state);
      }
    }
  }

  function enhanceTable(table) {
    if (table.getAttribute('data-sort-ready') === 'true' || !table.tHead) {
      return;
    }
    table.setAttribute('data-sort-ready', 'true');
    for (var b = 0; b < table.tBodies.length; b++) {
      markOriginalOrder(table.tBodies[b]);
    }
    var headers = table.tHead.querySelectorAll('th[scope="col"]');
    for (var i = 0; i < headers.length; i++) {
      enhanceHeader(table, headers[i]);
    }
    addNote(table);
  }

  /** A note after the table (after its wrapper) saying how the columns sort. */
  function addNote(table) {
    var rows = 0;
    for (var b = 0; b < table.tBodies.length; b++) {
      rows += bodyRows(table.tBodies[b]).length;
    }
    if (rows < 2) {
      return;
    }
    var doc = table.ownerDocument;
    var after = table.parentNode && table.parentNode.classList.contains('table-wrap') ? table.parentNode : table;
    var note = doc.createElement('p');
    note.className = 'note sort-note';
    note.textContent =
      'Sort by a column with the button in its heading: once for ascending order, again for ' +
      'descending, a third time for the original order.';
    after.parentNode.insertBefore(note, after.nextSibling);
  }

  function enhanceHeader(table, th) {
    if (th.querySelector('button.sort') || !(th.textContent || '').trim()) {
      return;
    }
    var declared = th.getAttribute('data-type');
    var type = declared === 'int' || declared === 'abs' ? declared : 'text';
    var doc = th.ownerDocument;
    var button = doc.createElement('button');
    button.type = 'button';
    button.className = 'sort';
    while (th.firstChild) {
      button.appendChild(th.firstChild);
    }
    th.appendChild(button);
    button.addEventListener('click', function () {
      sortTable(table, th, type);
    });
  }

  /**
   * Make a table wrapper a focusable, labelled region while its table is
   * wider than it (so that a keyboard can scroll it), and a plain box
   * otherwise. The label the page gave it is kept in data-region-label.
   */
  function fitWrapper(wrap) {
    if (!wrap.hasAttribute('data-region-label')) {
      wrap.setAttribute('data-region-label', wrap.getAttribute('aria-label') || '');
    }
    var label = wrap.getAttribute('data-region-label');
    if (wrap.scrollWidth > wrap.clientWidth) {
      wrap.setAttribute('tabindex', '0');
      wrap.setAttribute('role', 'region');
      if (label) {
        wrap.setAttribute('aria-label', label);
      }
    } else {
      wrap.removeAttribute('tabindex');
      wrap.removeAttribute('role');
      wrap.removeAttribute('aria-label');
    }
  }

  function fitWrappers(doc) {
    var wraps = doc.querySelectorAll('.table-wrap, .equation');
    for (var i = 0; i < wraps.length; i++) {
      fitWrapper(wraps[i]);
    }
  }

  /**
   * Give each body cell of a table of class "stack-later" its column's heading as data-label, which the
   * stylesheet draws before the cell when a phone stacks the rows, then make it "stack" (a long table's
   * page is smaller without a label in every cell; without script it is not stacked but scrolls).
   */
  function labelCells(table) {
    var heads = table.tHead ? table.tHead.querySelectorAll('th') : [];
    var labels = [];
    for (var h = 0; h < heads.length; h++) {
      labels.push((heads[h].textContent || '').trim());
    }
    for (var b = 0; b < table.tBodies.length; b++) {
      var rows = table.tBodies[b].rows;
      for (var r = 0; r < rows.length; r++) {
        var cells = rows[r].cells;
        for (var c = 0; c < cells.length && c < labels.length; c++) {
          if (!cells[c].hasAttribute('data-label')) {
            cells[c].setAttribute('data-label', labels[c]);
          }
        }
      }
    }
    table.classList.remove('stack-later');
    table.classList.add('stack');
  }

  function init(doc) {
    var later = doc.querySelectorAll('table.stack-later');
    for (var j = 0; j < later.length; j++) {
      labelCells(later[j]);
    }
    var tables = doc.querySelectorAll('table.sortable');
    for (var i = 0; i < tables.length; i++) {
      enhanceTable(tables[i]);
    }
    fitWrappers(doc);
  }

  /** Check the wrappers again after a resize (at most once a frame) and once fonts have loaded. */
  function watchWrappers(win, doc) {
    var pending = false;
    win.addEventListener('resize', function () {
      if (!pending) {
        pending = true;
        win.requestAnimationFrame(function () {
          pending = false;
          fitWrappers(doc);
        });
      }
    });
    win.addEventListener('load', function () {
      fitWrappers(doc);
    });
  }

  var api = {
    parseDecimal: parseDecimal,
    compareBig: compareBig,
    compareAbs: compareAbs,
    compareDecimalStrings: compareDecimalStrings,
    compareText: compareText,
    sortItems: sortItems,
    makeKey: makeKey,
    columnOf: columnOf,
    cellAt: cellAt,
    sortTable: sortTable,
    nextState: nextState,
    fitWrappers: fitWrappers,
    init: init
  };

  if (root) {
    var ns = root.Periplus || (root.Periplus = {});
    ns.sort = api;
  }
  if (typeof module === 'object' && module && module.exports) {
    module.exports = api;
  }

  var doc = root && root.document;
  if (doc && typeof doc.querySelectorAll === 'function' && typeof BigInt === 'function') {
    watchWrappers(root, doc);
    if (doc.readyState === 'loading') {
      doc.addEventListener('DOMContentLoaded', function () {
        init(doc);
      });
    } else {
      init(doc);
    }
  }
})(typeof window !== 'undefined' ? window : null);
