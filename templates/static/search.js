/*
 * Periplus: client-side search of the record (no server, works from file://).
 *
 * The index is a global set by data/search-index.js, loaded before this file:
 *   window.PERIPLUS_SEARCH = {cycles: [{map, map_name, cycle, url, length,
 *     canonical, word, modulus, members: [...], members_truncated}, ...]}
 *
 * The form #search-form has fields member, map, length and word; the filled
 * ones are combined with AND:
 *   member  a whole number of any size, matched exactly against the members
 *           (compared as normalised decimal strings, never as floats);
 *   map     case-insensitive part of the map id or the map name;
 *   length  the exact length;
 *   word    a fragment of the cyclic word: digits such as 1101, or residues
 *           separated by commas such as 0,11,4 (needed for moduli above 10).
 *           It may start anywhere in the word and run on round it.
 *
 * Results are built with textContent only (the data come from contributors).
 * Plain ES2020, no dependencies; the only global is window.Periplus.search.
 */
(function (root) {
  'use strict';

  var MAX_SHOWN = 200;

  /* ---------------------------------------------------------------- */
  /* Pure helpers (no DOM)                                             */
  /* ---------------------------------------------------------------- */

  // Characters ignored inside a typed number: spaces of every width, underscores.
  var IGNORED = /[\s\u00a0\u2007\u2009\u200a\u202f_]/g;

  function groupThousands(n) {
    return String(n).replace(/\B(?=(\d{3})+(?!\d))/g, ',');
  }

  function plural(n, one, many) {
    return groupThousands(n) + ' ' + (n === 1 ? one : many);
  }

  /**
   * Normalise a typed whole number. Returns {value: '' } for an empty field,
   * {value: '-17'} for a number, or {error: 'message'}.
   * Leading '+' removed; spaces, thin spaces and underscores removed; a
   * typographic minus (U+2212) read as '-'; leading zeros stripped; -0 is 0.
   */
  function normaliseInteger(raw, label) {
    var s = String(raw === null || raw === undefined ? '' : raw).trim();
    s = s.replace(IGNORED, '').replace(/^\u2212/, '-');
    if (s === '') {
      return { value: '' };
    }
    var m = /^([+-]?)([0-9]+)$/.exec(s);
    if (m === null) {
      return {
        error: (label || 'Member') + ': enter a whole number, such as 27 or -17 ' +
          '(digits with an optional minus sign; spaces and underscores are ignored).'
      };
    }
    var digits = m[2].replace(/^0+(?=[0-9])/, '');
    var negative = m[1] === '-' && digits !== '0';
    return { value: negative ? '-' + digits : digits };
  }

  function normaliseMember(raw) {
    return normaliseInteger(raw, 'Member');
  }

  /** A length: a positive whole number (as a canonical decimal string). */
  function normaliseLength(raw) {
    var r = normaliseInteger(raw, 'Length');
    if (r.error) {
      return { error: 'Length: enter a whole number of steps, such as 11.' };
    }
    if (r.value.charAt(0) === '-' || r.value === '0') {
      return { error: 'Length: a cycle has at least one step; enter a positive whole number.' };
    }
    return r;
  }

  /** Canonical text of one residue: digits without leading zeros. */
  function canonicalResidue(text) {
    var s = String(text).replace(IGNORED, '');
    if (!/^[0-9]+$/.test(s)) {
      return null;
    }
    return s.replace(/^0+(?=[0-9])/, '');
  }

  /**
   * Parse a word fragment. Returns {value: null} when empty,
   * {value: {list: [...] | null, digits: '1101' | null}} or {error}.
   *   With commas: list is the residues in order (e.g. ['0', '11', '4']).
   *   Without commas: digits is the digit string (spaces ignored); for maps
   *   whose words are comma-separated it stands for a single residue.
   */
  function parseWordFragment(raw) {
    var s = String(raw === null || raw === undefined ? '' : raw).trim();
    if (s === '') {
      return { value: null };
    }
    var message = 'Word: enter digits such as 1101, or residues separated by commas ' +
      'such as 0,11,4.';
    if (s.indexOf(',') >= 0) {
      var parts = s.split(',');
      var list = [];
      for (var i = 0; i < parts.length; i++) {
        var r = canonicalResidue(parts[i]);
        if (r === null) {
          return { error: message };
        }
        list.push(r);
      }
      return { value: { list: list, digits: null } };
    }
    var digits = s.replace(IGNORED, '');
    if (!/^[0-9]+$/.test(digits)) {
      return { error: message };
    }
    return { value: { list: null, digits: digits } };
  }

  /** Does the cycle write its word as comma-separated residues? */
  function usesCommaWord(cycle) {
    if (typeof cycle.modulus === 'number') {
      return cycle.modulus > 10;
    }
    return String(cycle.word || '').indexOf(',') >= 0;
  }

  /**
   * Repeat text (of count units) until it holds every cyclic factor of
   * length need: ceil(need / count) + 1 copies (at least two).
   */
  function copiesFor(need, count) {
    if (count <= 0) {
      return 0;
    }
    return Math.max(2, Math.ceil(need / count) + 1);
  }

  /**
   * Is the digit fragment a factor of the cyclic digit word? Rotations count,
   * and a fragment longer than the word may run round it more than once
   * (it is read in the periodic sequence of the orbit).
   */
  function cyclicDigitsContain(word, fragment) {
    word = String(word);
    if (fragment === '') {
      return true;
    }
    if (word === '') {
      return false;
    }
    var copies = copiesFor(fragment.length, word.length);
    return word.repeat(copies).indexOf(fragment) >= 0;
  }

  /**
   * Is the residue sequence `fragment` (array of canonical residue strings)
   * a factor of the cyclic residue sequence `residues`?
   */
  function cyclicListContain(residues, fragment) {
    if (fragment.length === 0) {
      return true;
    }
    if (residues.length === 0) {
      return false;
    }
    // Delimit every residue so that "1" never matches inside "11".
    var unit = residues.join(',') + ',';
    var copies = copiesFor(fragment.length, residues.length);
    var haystack = ',' + unit.repeat(copies);
    return haystack.indexOf(',' + fragment.join(',') + ',') >= 0;
  }

  /** Residues of a comma-separated word, canonical. */
  function splitWord(word) {
    var text = String(word || '');
    if (text === '') {
      return [];
    }
    return text.split(',').map(function (part) {
      var r = canonicalResidue(part);
      return r === null ? String(part).trim() : r;
    });
  }

  // Split comma words once per cycle object (the index itself is not modified).
  var residueCache = new WeakMap();

  /** Does the cycle's word contain the parsed fragment cyclically? */
  function wordMatches(cycle, fragment) {
    if (usesCommaWord(cycle)) {
      var residues = residueCache.get(cycle);
      if (residues === undefined || residues.word !== cycle.word) {
        residues = splitWord(cycle.word);
        residues.word = cycle.word;
        residueCache.set(cycle, residues);
      }
      var list = fragment.list || [canonicalResidue(fragment.digits)];
      return cyclicListContain(residues, list);
    }
    var digits = fragment.digits;
    if (digits === null) {
      // Residues given with commas against a digit word: each must be one digit.
      for (var i = 0; i < fragment.list.length; i++) {
        if (fragment.list[i].length !== 1) {
          return false;
        }
      }
      digits = fragment.list.join('');
    }
    return cyclicDigitsContain(String(cycle.word || ''), digits);
  }

  function mapMatches(cycle, needle) {
    var id = String(cycle.map || '').toLowerCase();
    var name = String(cycle.map_name || '').toLowerCase();
    if (id.indexOf(needle) >= 0 || name.indexOf(needle) >= 0) {
      return true;
    }
    // "3x + 1" finds "3x+1": also compare with the spaces taken out.
    var squeezed = needle.replace(/\s+/g, '');
    return squeezed !== needle &&
      (id.indexOf(squeezed) >= 0 || name.replace(/\s+/g, '').indexOf(squeezed) >= 0);
  }

  function memberMatches(cycle, member) {
    var members = cycle.members || [];
    for (var i = 0; i < members.length; i++) {
      if (members[i] === member) {
        return true;
      }
    }
    return String(cycle.canonical) === member;
  }

  /**
   * Parse the raw field values {member, map, length, word} into a query.
   * Returns {query: {...}} or {error, field}.
   */
  function parseQuery(fields) {
    var member = normaliseMember(fields.member);
    if (member.error) {
      return { error: member.error, field: 'member' };
    }
    var length = normaliseLength(fields.length);
    if (length.error) {
      return { error: length.error, field: 'length' };
    }
    var word = parseWordFragment(fields.word);
    if (word.error) {
      return { error: word.error, field: 'word' };
    }
    var map = String(fields.map === null || fields.map === undefined ? '' : fields.map)
      .trim().toLowerCase();
    return {
      query: {
        member: member.value,
        map: map,
        length: length.value,
        word: word.value
      }
    };
  }

  function isEmptyQuery(q) {
    return q.member === '' && q.map === '' && q.length === '' && q.word === null;
  }

  /**
   * Run a parsed query over the cycles. Returns
   * {matches: [cycle...], unsearchable: n, truncatedAt: k}
   * where unsearchable counts cycles that pass every other field but whose
   * member list is truncated and does not hold the member (so the member may
   * still be in them), and truncatedAt is the most members listed for such a cycle.
   */
  function search(cycles, q) {
    var matches = [];
    var unsearchable = 0;
    var truncatedAt = 0;
    for (var i = 0; i < cycles.length; i++) {
      var c = cycles[i];
      if (!c) {
        continue;
      }
      if (q.length !== '' && String(c.length) !== q.length) {
        continue;
      }
      if (q.map !== '' && !mapMatches(c, q.map)) {
        continue;
      }
      if (q.word !== null && !wordMatches(c, q.word)) {
        continue;
      }
      if (q.member !== '' && !memberMatches(c, q.member)) {
        if (c.members_truncated) {
          unsearchable += 1;
          truncatedAt = Math.max(truncatedAt, (c.members || []).length);
        }
        continue;
      }
      matches.push(c);
    }
    var others = q.map !== '' || q.length !== '' || q.word !== null;
    return {
      matches: matches,
      unsearchable: unsearchable,
      truncatedAt: truncatedAt,
      otherFields: others
    };
  }

  /** The status line for a search result. */
  function statusText(result) {
    var n = result.matches.length;
    var text = n === 0 ? 'No cycle found.' : plural(n, 'cycle', 'cycles') + ' found.';
    if (result.unsearchable > 0) {
      text += ' Very long cycles are searched by their first ' +
        plural(result.truncatedAt || 1000, 'member', 'members') + ' only, so ' +
        (result.unsearchable === 1 ? 'one of them' : groupThousands(result.unsearchable) +
          ' of them') +
        (result.otherFields ? ' that ' + (result.unsearchable === 1 ? 'fits' : 'fit') +
          ' the other fields' : '') +
        ' may still contain this number.';
    }
    return text;
  }

  /** The query string for a set of raw field values (empty fields left out). */
  function queryString(fields) {
    var parts = [];
    ['member', 'map', 'length', 'word'].forEach(function (name) {
      var v = fields[name];
      if (v !== null && v !== undefined && String(v).trim() !== '') {
        parts.push(encodeURIComponent(name) + '=' + encodeURIComponent(String(v).trim()));
      }
    });
    return parts.length ? '?' + parts.join('&') : '';
  }

  /** Raw field values from a query string such as "?member=-17&map=3x". */
  function fieldsFromQueryString(search) {
    var fields = {};
    var found = false;
    var s = String(search || '').replace(/^\?/, '');
    if (s === '') {
      return null;
    }
    s.split('&').forEach(function (pair) {
      if (pair === '') {
        return;
      }
      var eq = pair.indexOf('=');
      var key = eq < 0 ? pair : pair.slice(0, eq);
      var value = eq < 0 ? '' : pair.slice(eq + 1);
      try {
        key = decodeURIComponent(key.replace(/\+/g, ' '));
        value = decodeURIComponent(value.replace(/\+/g, ' '));
      } catch (e) {
        return;
      }
      if (key === 'member' || key === 'map' || key === 'length' || key === 'word') {
        fields[key] = value;
        found = true;
      }
    });
    return found ? fields : null;
  }

  /** Site root from data-root, with a trailing slash when not empty. */
  function normaliseRoot(value) {
    var r = String(value || '');
    if (r !== '' && r.charAt(r.length - 1) !== '/') {
      r += '/';
    }
    return r;
  }

  /* ---------------------------------------------------------------- */
  /* DOM                                                               */
  /* ---------------------------------------------------------------- */

  var FIELDS = ['member', 'map', 'length', 'word'];

  function field(form, name) {
    var el = form.elements ? form.elements.namedItem(name) : null;
    return el && 'value' in el ? el : null;
  }

  function readFields(form) {
    var fields = {};
    FIELDS.forEach(function (name) {
      var el = field(form, name);
      fields[name] = el ? el.value : '';
    });
    return fields;
  }

  function writeFields(form, fields) {
    FIELDS.forEach(function (name) {
      var el = field(form, name);
      if (el && Object.prototype.hasOwnProperty.call(fields, name)) {
        el.value = fields[name];
      }
    });
  }

  function markInvalid(form, name) {
    FIELDS.forEach(function (n) {
      var el = field(form, n);
      if (!el) {
        return;
      }
      if (n === name) {
        el.setAttribute('aria-invalid', 'true');
      } else {
        el.removeAttribute('aria-invalid');
      }
    });
  }

  function clear(node) {
    while (node.firstChild) {
      node.removeChild(node.firstChild);
    }
  }

  function updateUrl(win, fields) {
    try {
      if (win.history && typeof win.history.replaceState === 'function') {
        var path = win.location.pathname || '';
        win.history.replaceState(null, '', path + queryString(fields) + (win.location.hash || ''));
      }
    } catch (e) {
      /* file:// and some sandboxes refuse replaceState: the search still works. */
    }
  }

  function renderResults(doc, container, matches, rootPath) {
    clear(container);
    if (matches.length === 0) {
      return;
    }
    var list = doc.createElement('ol');
    list.className = 'link-list';
    var shown = Math.min(matches.length, MAX_SHOWN);
    for (var i = 0; i < shown; i++) {
      var c = matches[i];
      var li = doc.createElement('li');
      var a = doc.createElement('a');
      a.setAttribute('href', rootPath + String(c.url || ''));
      a.textContent = String(c.map_name || c.map || '') + ': cycle through ' + String(c.canonical);
      li.appendChild(a);
      li.appendChild(doc.createTextNode(' \u2014 length ' + String(c.length)));
      list.appendChild(li);
    }
    container.appendChild(list);
    if (matches.length > shown) {
      var note = doc.createElement('p');
      note.className = 'note';
      var more = matches.length - shown;
      note.textContent = 'The first ' + groupThousands(shown) + ' are shown; ' +
        plural(more, 'more cycle matches', 'more cycles match') +
        '. Fill in more fields to narrow the search.';
      container.appendChild(note);
    }
  }

  function setup(win) {
    var doc = win.document;
    var form = doc.getElementById('search-form');
    var status = doc.getElementById('search-status');
    var results = doc.getElementById('search-results');
    if (!form || !status || !results) {
      return;
    }
    var rootPath = normaliseRoot(form.getAttribute('data-root'));
    var index = win.PERIPLUS_SEARCH;
    var cycles = index && Array.isArray(index.cycles) ? index.cycles : null;

    function run(fields, fromUrl) {
      if (!fromUrl) {
        updateUrl(win, fields);
      }
      if (cycles === null) {
        clear(results);
        status.textContent = 'The search index (data/search-index.js) did not load, so ' +
          'search is not available here. The map and length pages list every cycle.';
        return;
      }
      var parsed = parseQuery(fields);
      if (parsed.error) {
        markInvalid(form, parsed.field);
        clear(results);
        status.textContent = parsed.error;
        return;
      }
      markInvalid(form, null);
      if (isEmptyQuery(parsed.query)) {
        clear(results);
        status.textContent = 'Fill in at least one field to search the ' +
          plural(cycles.length, 'cycle', 'cycles') + ' of the record.';
        return;
      }
      var result = search(cycles, parsed.query);
      renderResults(doc, results, result.matches, rootPath);
      status.textContent = statusText(result);
    }

    form.addEventListener('submit', function (event) {
      event.preventDefault();
      run(readFields(form), false);
    });

    var initial = fieldsFromQueryString(win.location ? win.location.search : '');
    if (initial) {
      writeFields(form, initial);
      run(readFields(form), true);
    } else if (cycles === null) {
      status.textContent = 'The search index (data/search-index.js) did not load, so ' +
        'search is not available here. The map and length pages list every cycle.';
    }
  }

  var api = {
    normaliseMember: normaliseMember,
    normaliseLength: normaliseLength,
    parseWordFragment: parseWordFragment,
    cyclicDigitsContain: cyclicDigitsContain,
    cyclicListContain: cyclicListContain,
    wordMatches: wordMatches,
    mapMatches: mapMatches,
    parseQuery: parseQuery,
    search: search,
    statusText: statusText,
    queryString: queryString,
    fieldsFromQueryString: fieldsFromQueryString,
    normaliseRoot: normaliseRoot,
    renderResults: renderResults,
    setup: setup,
    MAX_SHOWN: MAX_SHOWN
  };

  if (root) {
    var ns = root.Periplus || (root.Periplus = {});
    ns.search = api;
  }
  if (typeof module === 'object' && module && module.exports) {
    module.exports = api;
  }

  if (root && root.document && typeof root.document.getElementById === 'function') {
    if (root.document.readyState === 'loading') {
      root.document.addEventListener('DOMContentLoaded', function () {
        setup(root);
      });
    } else {
      setup(root);
    }
  }
})(typeof window !== 'undefined' ? window : null);
