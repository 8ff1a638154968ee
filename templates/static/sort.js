/*
 * Periplus: sortable tables (progressive enhancement).
 *
 * Every <table class="sortable"> gets a <button class="sort"> in each
 * <th scope="col"> of its <thead>. Clicking sorts the rows of each <tbody>
 * by that column: ascending first, then descending, toggling. The active
 * header carries aria-sort; the others have it removed.
 *
 * Keys: a body cell's data-value if present, else its text. Header cells say
 * how to compare with data-type="int" (exact, with BigInt: numbers may have
 * thousands of digits and a minus sign) or data-type="text" (the default;
 * localeCompare with numeric collation). Cells whose int key is not a whole
 * number (e.g. a dash for "none") sort after all numbers in both directions.
 *
 * The sort is stable: rows that tie keep their previous relative order
 * (each sort breaks ties by the row's position before that sort, and each
 * row's original position is kept in data-sort-index).
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
   * type: 'int' or 'text'; direction: 'ascending' or 'descending'.
   * Ties (and the relative order among missing keys) follow pos, ascending,
   * in both directions, so the sort is stable and deterministic.
   * Returns a new array; the input is not modified.
   */
  function sortItems(items, type, direction) {
    var sign = direction === 'descending' ? -1 : 1;
    var copy = items.slice();
    copy.sort(function (x, y) {
      var c;
      if (type === 'int') {
        if (x.key === null || y.key === null) {
          // Non-numbers go last whatever the direction, among themselves in text order.
          c = compareBig(x.key, y.key);
          if (c === 0 && x.key === null) {
            c = compareText(x.text, y.text);
          }
        } else {
          c = sign * compareBig(x.key, y.key);
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
    if (type === 'int') {
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

  function sortBody(tbody, column, type, direction) {
    var rows = [];
    var children = tbody.children;
    for (var i = 0; i < children.length; i++) {
      if (children[i].tagName === 'TR') {
        rows.push(children[i]);
      }
    }
    if (rows.length < 2) {
      return;
    }
    var items = rows.map(function (row, pos) {
      if (!row.hasAttribute('data-sort-index')) {
        row.setAttribute('data-sort-index', String(pos));
      }
      var text = cellValue(cellAt(row, column));
      return { row: row, pos: pos, text: text, key: makeKey(text, type) };
    });
    var sorted = sortItems(items, type, direction);
    var fragment = tbody.ownerDocument.createDocumentFragment();
    sorted.forEach(function (item) {
      fragment.appendChild(item.row);
    });
    tbody.appendChild(fragment);
  }

  function sortTable(table, th, type) {
    var current = th.getAttribute('aria-sort');
    var direction = current === 'ascending' ? 'descending' : 'ascending';
    var column = columnOf(th);
    if (column < 0) {
      return;
    }
    var headers = table.querySelectorAll('thead th');
    for (var i = 0; i < headers.length; i++) {
      if (headers[i] !== th) {
        headers[i].removeAttribute('aria-sort');
      }
    }
    th.setAttribute('aria-sort', direction);
    var bodies = table.tBodies;
    for (var b = 0; b < bodies.length; b++) {
      sortBody(bodies[b], column, type, direction);
    }
  }

  function enhanceTable(table) {
    if (table.getAttribute('data-sort-ready') === 'true' || !table.tHead) {
      return;
    }
    table.setAttribute('data-sort-ready', 'true');
    var headers = table.tHead.querySelectorAll('th[scope="col"]');
    for (var i = 0; i < headers.length; i++) {
      enhanceHeader(table, headers[i]);
    }
  }

  function enhanceHeader(table, th) {
    if (th.querySelector('button.sort') || !(th.textContent || '').trim()) {
      return;
    }
    var type = th.getAttribute('data-type') === 'int' ? 'int' : 'text';
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

  function init(doc) {
    var tables = doc.querySelectorAll('table.sortable');
    for (var i = 0; i < tables.length; i++) {
      enhanceTable(tables[i]);
    }
  }

  var api = {
    parseDecimal: parseDecimal,
    compareBig: compareBig,
    compareDecimalStrings: compareDecimalStrings,
    compareText: compareText,
    sortItems: sortItems,
    makeKey: makeKey,
    columnOf: columnOf,
    cellAt: cellAt,
    sortTable: sortTable,
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
    if (doc.readyState === 'loading') {
      doc.addEventListener('DOMContentLoaded', function () {
        init(doc);
      });
    } else {
      init(doc);
    }
  }
})(typeof window !== 'undefined' ? window : null);
