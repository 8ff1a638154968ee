/*
 * Periplus: client-side search of the record (no server, works from file://).
 *
 * The index is a set of small scripts written by the build (builder/site/search_index.py has the
 * layout). The page loads data/search-index.js, the manifest, with a script element; this file
 * loads the rest from data/search/ as a query needs it, by inserting script elements (pages
 * opened from disk may run scripts but not fetch JSON). Every index script hands its data over
 * with window.PeriplusSearchData.push([name, data]). A cycle's row is
 *   [rank, map id, map name, cycle id, canonical member, length, modulus, truncated]
 * and results come in rank order: maps in natural order (3x+1, 3x-1, 3x+5, 3x-5, ...), then by
 * least |member|. A member query loads one member shard (m<i>, chosen by the CRC-32 of the
 * member's decimal text); a map query one key shard (k<i>) and the rows of that map's range
 * (r<i>); a length query the rows of that length (l<i>); words (w<i>) are loaded only for a
 * word fragment.
 *
 * The form #search-form has fields member, map, length and word; the filled
 * ones are combined with AND:
 *   member  a whole number of any size, matched exactly against the members
 *           (compared as normalised decimal strings, never as floats);
 *   map     the whole id or name of a map (capitals and spaces do not matter);
 *           when no map has it, every map whose id or name contains it;
 *   length  the exact length;
 *   word    a fragment of the cyclic word: digits such as 1101, or residues
 *           separated by commas such as 0,11,4 (needed for moduli above 10).
 *           It may start anywhere in the word and run on round it.
 *
 * The page searches when the form is submitted, and as the reader types, once typing
 * pauses for DEBOUNCE_MS; the query string follows the fields. A field that does not
 * parse gets its message in the element whose id is the field's id with "-error",
 * aria-invalid="true" and that element in its aria-describedby; while the reader types,
 * a field that is only the start of an entry (a lone minus sign) waits unmarked.
 *
 * Results are built with textContent only (the data come from contributors).
 * Plain ES2020, no dependencies; the globals are window.Periplus.search and
 * the queue window.PeriplusSearchData.
 */
(function (root) {
  'use strict';

  var MAX_SHOWN = 200;
  // A search starts once typing has paused this long, and says "Searching" only after SLOW_MS more.
  var DEBOUNCE_MS = 250;
  var SLOW_MS = 300;
  var INDEX_FILE = 'data/search-index.js';
  var SHARD_FOLDER = 'data/search/';

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
  function normaliseInteger(raw) {
    var s = String(raw === null || raw === undefined ? '' : raw).trim();
    s = s.replace(IGNORED, '').replace(/^\u2212/, '-');
    if (s === '') {
      return { value: '' };
    }
    var m = /^([+-]?)([0-9]+)$/.exec(s);
    if (m === null) {
      return { error: 'Enter a whole number: digits, with a minus sign before a negative one.' };
    }
    var digits = m[2].replace(/^0+(?=[0-9])/, '');
    var negative = m[1] === '-' && digits !== '0';
    return { value: negative ? '-' + digits : digits };
  }

  function normaliseMember(raw) {
    return normaliseInteger(raw);
  }

  /** A length: a positive whole number (as a canonical decimal string). */
  function normaliseLength(raw) {
    var r = normaliseInteger(raw);
    if (r.error) {
      return { error: 'Enter the number of members as a whole number, such as 11.' };
    }
    if (r.value.charAt(0) === '-' || r.value === '0') {
      return { error: 'A cycle has at least one member: enter a positive whole number.' };
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
    var message = 'Enter digits, or residues separated by commas.';
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

  /** Part-match: is the needle (lower case) part of the map's id or name? */
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

  /**
   * A map's id or name as the map field compares it whole: spaces removed,
   * ASCII capitals in lower case, a typographic minus read as '-'
   * (builder/site/search_index.py map_key does the same).
   */
  function mapKey(text) {
    return String(text === null || text === undefined ? '' : text)
      .replace(/[ \t\n\r\f\v\u00a0\u2007\u2009\u200a\u202f]/g, '')
      .replace(/\u2212/g, '-')
      .replace(/[A-Z]+/g, function (s) { return s.toLowerCase(); });
  }

  /**
   * The maps a map field selects: those whose whole id or name is the
   * field's text (exact), else those whose id or name contains it.
   * maps: [{map, map_name, ...}]. Returns {maps: [...], exact: bool}.
   */
  function resolveMaps(maps, q) {
    var key = mapKey(q.mapText);
    var exact = maps.filter(function (m) {
      return mapKey(m.map) === key || mapKey(m.map_name) === key;
    });
    if (exact.length > 0) {
      return { maps: exact, exact: true };
    }
    return {
      maps: maps.filter(function (m) { return mapMatches(m, q.map); }),
      exact: false
    };
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
   * Returns {query: {...}}, or {error, field, errors} where errors lists
   * every field that does not parse ({field, error}, in the order of the
   * form) and error and field are the first of them.
   */
  function parseQuery(fields) {
    var member = normaliseMember(fields.member);
    var length = normaliseLength(fields.length);
    var word = parseWordFragment(fields.word);
    var errors = [];
    [['member', member], ['length', length], ['word', word]].forEach(function (pair) {
      if (pair[1].error) {
        errors.push({ field: pair[0], error: pair[1].error });
      }
    });
    if (errors.length > 0) {
      return { error: errors[0].error, field: errors[0].field, errors: errors };
    }
    var mapText = String(fields.map === null || fields.map === undefined ? '' : fields.map).trim();
    return {
      query: {
        member: member.value,
        map: mapText.toLowerCase(),
        mapText: mapText,
        length: length.value,
        word: word.value
      }
    };
  }

  /**
   * Is a field's text the start of an entry rather than a wrong one: a lone
   * sign in the member or length field, or a word fragment that ends with a
   * comma? While the reader types, such a field waits instead of being marked.
   */
  function unfinished(name, raw) {
    var s = String(raw === null || raw === undefined ? '' : raw).replace(IGNORED, '');
    if (name === 'member' || name === 'length') {
      return /^[+\-\u2212]$/.test(s);
    }
    if (name === 'word') {
      return /,$/.test(s) && !parseWordFragment(s.replace(/,$/, '')).error;
    }
    return false;
  }

  var LABELS = { member: 'Member', map: 'Map', length: 'Length', word: 'Word fragment' };

  /** The labels of some fields, joined as in a sentence: "Member", "Member and Length", ... */
  function fieldNames(names) {
    var labels = names.map(function (name) { return LABELS[name] || name; });
    if (labels.length < 2) {
      return labels.join('');
    }
    return labels.slice(0, -1).join(', ') + ' and ' + labels[labels.length - 1];
  }

  /** The status line when fields do not parse (each field's own message is shown under it). */
  function errorStatus(errors) {
    var names = errors.map(function (e) { return e.field; });
    return 'Not searched: correct the ' + fieldNames(names) + (names.length === 1 ? ' field' : ' fields') +
      ' (the message is under ' + (names.length === 1 ? 'it' : 'each') + ').';
  }

  /** The status line while a field waits for the rest of its entry. */
  function waitingStatus(names) {
    return 'Waiting for the rest of the ' + fieldNames(names) + (names.length === 1 ? ' field' : ' fields') + '.';
  }

  function isEmptyQuery(q) {
    return q.member === '' && q.map === '' && q.length === '' && q.word === null;
  }

  function hasOtherFields(q) {
    return q.map !== '' || q.length !== '' || q.word !== null;
  }

  /** Does the cycle pass the length, map and word fields? (selected: {id: true} or null) */
  function passesOthers(c, q, selected) {
    if (q.length !== '' && String(c.length) !== q.length) {
      return false;
    }
    if (selected !== null && !Object.prototype.hasOwnProperty.call(selected, String(c.map))) {
      return false;
    }
    return q.word === null || wordMatches(c, q.word);
  }

  function selectedIds(selection) {
    if (selection === null) {
      return null;
    }
    var ids = Object.create(null);
    selection.maps.forEach(function (m) { ids[String(m.map)] = true; });
    return ids;
  }

  /**
   * Filter cycles (in result order) by a parsed query; selection is what
   * resolveMaps gave for the map field (or null). With checkMember false the
   * cycles are already known to hold the member. Returns
   * {matches, count, unsearchable, truncatedAt, otherFields, mapFallback}
   * where unsearchable counts cycles that pass every other field but whose
   * member list is truncated and does not hold the member (so the member may
   * still be in them), and truncatedAt is the most members listed for such a cycle.
   */
  function filterCycles(cycles, q, selection, checkMember) {
    var selected = selectedIds(selection);
    var matches = [];
    var unsearchable = 0;
    var truncatedAt = 0;
    for (var i = 0; i < cycles.length; i++) {
      var c = cycles[i];
      if (!c || !passesOthers(c, q, selected)) {
        continue;
      }
      if (checkMember && q.member !== '' && !memberMatches(c, q.member)) {
        if (c.members_truncated) {
          unsearchable += 1;
          truncatedAt = Math.max(truncatedAt, (c.members || []).length);
        }
        continue;
      }
      matches.push(c);
    }
    return {
      matches: matches,
      count: matches.length,
      unsearchable: unsearchable,
      truncatedAt: truncatedAt,
      otherFields: hasOtherFields(q),
      mapFallback: selection !== null && !selection.exact && selection.maps.length > 0
    };
  }

  /** The maps of a list of cycles, each once, in the order met. */
  function mapsOf(cycles) {
    var seen = Object.create(null);
    var maps = [];
    cycles.forEach(function (c) {
      if (c && !seen[c.map]) {
        seen[c.map] = true;
        maps.push({ map: c.map, map_name: c.map_name });
      }
    });
    return maps;
  }

  /**
   * Search a whole list of cycles (each with its members, in result order):
   * the reference the sharded lookup below must agree with. maps lists every
   * map of the record (default: the maps of the cycles).
   */
  function search(cycles, q, maps) {
    var selection = q.map !== '' ? resolveMaps(maps || mapsOf(cycles), q) : null;
    return filterCycles(cycles, q, selection, true);
  }

  /** The status line for a search result. */
  function statusText(result) {
    var n = typeof result.count === 'number' ? result.count : result.matches.length;
    var text = n === 0 ? 'No cycle found.' : plural(n, 'cycle', 'cycles') + ' found.';
    if (result.mapFallback) {
      text += ' No map has exactly this name or id, so the maps whose name or id contains it were searched.';
    }
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

  /** The status line when a part of the index could not be loaded. */
  function failureText(error) {
    var path = error && error.path ? error.path : INDEX_FILE;
    return 'A part of the search index (' + path + ') did not load, so this search ' +
      'cannot be finished here. The map and length pages list every cycle.';
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
  /* The sharded index                                                 */
  /* ---------------------------------------------------------------- */

  var crcTable = null;

  /** CRC-32 (the polynomial of zlib and PNG) of an array of bytes, unsigned. */
  function crc32(bytes) {
    if (crcTable === null) {
      crcTable = [];
      for (var n = 0; n < 256; n++) {
        var c = n;
        for (var k = 0; k < 8; k++) {
          c = c & 1 ? 0xedb88320 ^ (c >>> 1) : c >>> 1;
        }
        crcTable.push(c >>> 0);
      }
    }
    var crc = 0xffffffff;
    for (var i = 0; i < bytes.length; i++) {
      crc = crcTable[(crc ^ bytes[i]) & 0xff] ^ (crc >>> 8);
    }
    return (crc ^ 0xffffffff) >>> 0;
  }

  /** The UTF-8 bytes of a text. */
  function utf8(text) {
    var out = [];
    for (var ch of String(text)) {
      var c = ch.codePointAt(0);
      if (c < 0x80) {
        out.push(c);
      } else if (c < 0x800) {
        out.push(0xc0 | c >> 6, 0x80 | c & 63);
      } else if (c < 0x10000) {
        out.push(0xe0 | c >> 12, 0x80 | c >> 6 & 63, 0x80 | c & 63);
      } else {
        out.push(0xf0 | c >> 18, 0x80 | c >> 12 & 63, 0x80 | c >> 6 & 63, 0x80 | c & 63);
      }
    }
    return out;
  }

  /** The shard of a text among count shards. */
  function shardOf(text, count) {
    return crc32(utf8(text)) % Math.max(1, count);
  }

  /** A cycle object from an index row (a length row has the word after it). */
  function cycleOfRow(row) {
    var c = {
      rank: row[0],
      map: row[1],
      map_name: row[2],
      cycle: row[3],
      canonical: row[4],
      length: row[5],
      modulus: row[6],
      members_truncated: row[7] === 1
    };
    if (row.length > 8) {
      setWord(c, row[8]);
    }
    return c;
  }

  /** A word item is the word, or [word, modulus] for moduli above 10. */
  function setWord(c, item) {
    c.word = Array.isArray(item) ? String(item[0]) : String(item);
  }

  /** The address of a cycle's page from the manifest's pattern. */
  function cycleUrl(pattern, c) {
    return String(pattern)
      .replace('{map}', function () { return String(c.map); })
      .replace('{cycle}', function () { return String(c.cycle); });
  }

  /** Which file of a series (cut at the ranks starts) holds a rank. */
  function fileOfRank(starts, rank) {
    var lo = 0;
    var hi = starts.length - 1;
    while (lo < hi) {
      var mid = (lo + hi + 1) >> 1;
      if (starts[mid] <= rank) {
        lo = mid;
      } else {
        hi = mid - 1;
      }
    }
    return lo;
  }

  function filesOfRanks(starts, ranks) {
    var seen = Object.create(null);
    var out = [];
    ranks.forEach(function (r) {
      var i = fileOfRank(starts, r);
      if (!seen[i]) {
        seen[i] = true;
        out.push(i);
      }
    });
    return out.sort(function (a, b) { return a - b; });
  }

  function filesOfRanges(starts, ranges) {
    var out = [];
    ranges.forEach(function (range) {
      if (range[1] > 0) {
        var last = fileOfRank(starts, range[0] + range[1] - 1);
        for (var i = fileOfRank(starts, range[0]); i <= last; i++) {
          out.push(i);
        }
      }
    });
    return out.filter(function (v, i, all) { return all.indexOf(v) === i; })
      .sort(function (a, b) { return a - b; });
  }

  function loadAll(index, prefix, files) {
    return Promise.all(files.map(function (i) { return index.load(prefix + i); }));
  }

  function count(n) {
    var out = [];
    for (var i = 0; i < n; i++) {
      out.push(i);
    }
    return out;
  }

  /** The maps the map field selects, from the key shards. */
  async function selectMaps(index, q) {
    var man = index.manifest;
    var key = mapKey(q.mapText);
    var shard = await index.load('k' + shardOf(key, man.keys));
    var entries = Object.prototype.hasOwnProperty.call(shard, key) ? shard[key] : [];
    var toMap = function (e) { return { map: e[0], map_name: e[1], first: e[2], count: e[3] }; };
    if (entries.length > 0) {
      return { maps: entries.map(toMap), exact: true };
    }
    var every = [];
    var seen = Object.create(null);
    (await loadAll(index, 'k', count(man.keys))).forEach(function (s) {
      Object.keys(s).forEach(function (k) {
        s[k].forEach(function (e) {
          if (!seen[e[0]]) {
            seen[e[0]] = true;
            every.push(toMap(e));
          }
        });
      });
    });
    return resolveMaps(every, q);
  }

  /** The cycles with these ranks (ascending), from the row shards. */
  async function cyclesOfRanks(index, ranks) {
    var starts = index.manifest.rows;
    var files = filesOfRanks(starts, ranks);
    var shards = await loadAll(index, 'r', files);
    var byRank = Object.create(null);
    shards.forEach(function (rows) {
      rows.forEach(function (row) { byRank[row[0]] = row; });
    });
    return ranks.map(function (r) { return cycleOfRow(byRank[r]); });
  }

  /** Every cycle of the selected maps, in rank order. */
  async function cyclesOfMaps(index, selection) {
    var ranges = selection.maps.map(function (m) { return [m.first, m.count]; });
    var shards = await loadAll(index, 'r', filesOfRanges(index.manifest.rows, ranges));
    var out = [];
    shards.forEach(function (rows) {
      rows.forEach(function (row) {
        for (var i = 0; i < ranges.length; i++) {
          if (row[0] >= ranges[i][0] && row[0] < ranges[i][0] + ranges[i][1]) {
            out.push(cycleOfRow(row));
            return;
          }
        }
      });
    });
    return out.sort(function (a, b) { return a.rank - b.rank; });
  }

  /** Every cycle of a length (with its word), in rank order. */
  async function cyclesOfLength(index, length) {
    var span = index.manifest.lengths.filter(function (s) { return String(s[0]) === length; })[0];
    if (!span) {
      return [];
    }
    var shards = await loadAll(index, 'l', count(span[2] - span[1] + 1).map(function (i) { return span[1] + i; }));
    var out = [];
    shards.forEach(function (rows) {
      rows.forEach(function (row) {
        if (String(row[5]) === length) {
          out.push(cycleOfRow(row));
        }
      });
    });
    return out;
  }

  /** Give each cycle its word, from the word shards. */
  async function attachWords(index, cycles) {
    var starts = index.manifest.words;
    var need = cycles.filter(function (c) { return typeof c.word !== 'string'; });
    var files = filesOfRanks(starts, need.map(function (c) { return c.rank; }));
    var shards = await loadAll(index, 'w', files);
    var byFile = Object.create(null);
    files.forEach(function (f, i) { byFile[f] = shards[i]; });
    need.forEach(function (c) {
      var f = fileOfRank(starts, c.rank);
      setWord(c, byFile[f][c.rank - starts[f]]);
    });
  }

  /** Keep the cycles that pass the length and map fields, then give them their words if needed. */
  async function narrow(index, cycles, q, selection) {
    var cheap = { member: '', map: q.map, length: q.length, word: null };
    var kept = cycles.filter(function (c) { return passesOthers(c, cheap, selectedIds(selection)); });
    if (q.word !== null) {
      await attachWords(index, kept);
    }
    return kept;
  }

  /** A member query: one member shard, and the shards of its own for a member in many cycles. */
  async function lookupMember(index, q, selection) {
    var man = index.manifest;
    var others = hasOtherFields(q);
    var shard = await index.load('m' + shardOf(q.member, man.members));
    var entry = Object.prototype.hasOwnProperty.call(shard, q.member) ? shard[q.member] : [];
    var rows = Array.isArray(entry) ? entry : [];
    if (!Array.isArray(entry)) {
      // Rows of their own: all of them for other fields to filter, else enough to show.
      for (var i = entry.x[0]; i < entry.x[1] && (others || rows.length < MAX_SHOWN); i++) {
        rows = rows.concat(await index.load('x' + i));
      }
    }
    var cycles = await narrow(index, rows.map(cycleOfRow), q, selection);
    var result = filterCycles(cycles, q, selection, false);
    if (!others) {
      result.count = Array.isArray(entry) ? rows.length : entry.hits;
      var held = Array.isArray(entry) ? rows.filter(function (r) { return r[7] === 1; }).length : entry.truncated;
      result.unsearchable = man.truncated - held;
    } else if (man.truncated > 0) {
      var long = (await loadAll(index, 't', count(man.long))).reduce(function (a, b) { return a.concat(b); }, []);
      var found = Object.create(null);
      result.matches.forEach(function (c) { found[c.rank] = true; });
      var rest = long.map(cycleOfRow).filter(function (c) { return !found[c.rank]; });
      result.unsearchable = filterCycles(await narrow(index, rest, q, selection), q, selection, false).count;
    }
    result.truncatedAt = result.unsearchable > 0 ? man.listed : 0;
    return result;
  }

  /** A word query alone: every word shard, then the rows of the results shown. */
  async function lookupWord(index, q) {
    var starts = index.manifest.words;
    var shards = await loadAll(index, 'w', count(starts.length));
    var ranks = [];
    shards.forEach(function (items, f) {
      items.forEach(function (item, i) {
        var c = { modulus: Array.isArray(item) ? item[1] : null };
        setWord(c, item);
        if (wordMatches(c, q.word)) {
          ranks.push(starts[f] + i);
        }
      });
    });
    var shown = await cyclesOfRanks(index, ranks.slice(0, MAX_SHOWN));
    var result = filterCycles([], q, null, false);
    result.matches = shown;
    result.count = ranks.length;
    return result;
  }

  /**
   * Run a parsed query against the sharded index {manifest, load(name) ->
   * Promise}. The result is search()'s, except that matches may hold only
   * the first MAX_SHOWN (or more) of count cycles.
   */
  async function lookup(index, q) {
    var selection = q.map !== '' ? await selectMaps(index, q) : null;
    if (selection !== null && selection.maps.length === 0) {
      return filterCycles([], q, selection, false);
    }
    if (q.member !== '') {
      return lookupMember(index, q, selection);
    }
    if (selection === null && q.length === '') {
      return lookupWord(index, q);
    }
    var cycles = selection !== null ? await cyclesOfMaps(index, selection)
      : await cyclesOfLength(index, q.length);
    return filterCycles(await narrow(index, cycles, q, selection), q, selection, false);
  }

  /**
   * The index of a page: the manifest handed over by data/search-index.js,
   * and load(name), which inserts data/search/<name>.js and resolves with its
   * data (or rejects with {path} when the script fails or hands nothing over).
   */
  function openIndex(win, rootPath) {
    var doc = win.document;
    var queue = Array.isArray(win.PeriplusSearchData) ? win.PeriplusSearchData : [];
    var got = Object.create(null);
    var waiting = Object.create(null);
    function receive(item) {
      if (Array.isArray(item) && typeof item[0] === 'string') {
        got[item[0]] = item[1];
        var w = waiting[item[0]];
        if (w) {
          delete waiting[item[0]];
          w.resolve(item[1]);
        }
      }
    }
    queue.forEach(receive);
    queue.length = 0;
    queue.push = function () {
      for (var i = 0; i < arguments.length; i++) {
        receive(arguments[i]);
      }
      return 0;
    };
    win.PeriplusSearchData = queue;
    function load(name) {
      if (name in got) {
        return Promise.resolve(got[name]);
      }
      if (name in waiting) {
        return waiting[name].promise;
      }
      var path = SHARD_FOLDER + name + '.js';
      var entry = {};
      entry.promise = new Promise(function (resolve, reject) {
        entry.resolve = resolve;
        entry.reject = reject;
      });
      waiting[name] = entry;
      var script = doc.createElement('script');
      var done = function () {
        if (script.parentNode) {
          script.parentNode.removeChild(script);
        }
        if (waiting[name] === entry) {
          delete waiting[name];
          entry.reject({ path: path });
        }
      };
      script.onload = done;
      script.onerror = done;
      script.src = rootPath + path;
      (doc.head || doc.body || doc.documentElement).appendChild(script);
      return entry.promise;
    }
    var manifest = got.index && typeof got.index === 'object' ? got.index : null;
    return { manifest: manifest, load: load };
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

  /**
   * Tie each error to its field: the field's message element (the field's
   * id with "-error") gets the text and is shown, and the field gets
   * aria-invalid="true" and that element first in its aria-describedby.
   * A field without an error has all three taken away again.
   */
  function showErrors(doc, form, errors) {
    FIELDS.forEach(function (name) {
      var el = field(form, name);
      if (!el) {
        return;
      }
      var found = errors.filter(function (e) { return e.field === name; })[0];
      var box = el.id ? doc.getElementById(el.id + '-error') : null;
      var ids = (el.getAttribute('aria-describedby') || '').split(/\s+/).filter(function (id) {
        return id !== '' && !(box && id === box.id);
      });
      if (found) {
        el.setAttribute('aria-invalid', 'true');
        if (box) {
          box.textContent = found.error;
          box.hidden = false;
          ids.unshift(box.id);
        }
      } else {
        el.removeAttribute('aria-invalid');
        if (box) {
          box.textContent = '';
          box.hidden = true;
        }
      }
      if (ids.length > 0) {
        el.setAttribute('aria-describedby', ids.join(' '));
      } else {
        el.removeAttribute('aria-describedby');
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

  function renderResults(doc, container, result, rootPath, pattern, listed) {
    clear(container);
    var matches = result.matches;
    var n = typeof result.count === 'number' ? result.count : matches.length;
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
      a.setAttribute('href', rootPath + cycleUrl(pattern, c));
      a.textContent = String(c.map_name || c.map || '') + ': cycle through ' + groupThousands(c.canonical);
      li.appendChild(a);
      var facts = ' \u2014 length ' + groupThousands(c.length);
      if (c.members_truncated) {
        facts += '; searched by its first ' + plural(listed || 1000, 'member', 'members') + ' only';
      }
      li.appendChild(doc.createTextNode(facts));
      list.appendChild(li);
    }
    container.appendChild(list);
    if (n > shown) {
      var note = doc.createElement('p');
      note.className = 'note';
      var more = n - shown;
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
    var index = openIndex(win, rootPath);
    var manifest = index.manifest;
    var latest = 0;
    var notLoaded = 'The search index (' + INDEX_FILE + ') did not load, so ' +
      'search is not available here. The map and length pages list every cycle.';

    var typingTimer = null;
    var lastTyped = null;

    /**
     * Search with the fields' values. how is 'submit' (the button or Enter),
     * 'typing' (a pause in typing) or 'address' (the query string the page
     * was opened with, which is then left as it is).
     */
    function run(fields, how) {
      if (how !== 'address') {
        updateUrl(win, fields);
      }
      lastTyped = JSON.stringify(fields);
      latest += 1;
      var mine = latest;
      if (manifest === null) {
        clear(results);
        status.textContent = notLoaded;
        return;
      }
      var parsed = parseQuery(fields);
      var errors = parsed.errors || [];
      var waiting = how !== 'typing' ? [] : errors.filter(function (e) {
        return unfinished(e.field, fields[e.field]);
      });
      errors = errors.filter(function (e) { return waiting.indexOf(e) < 0; });
      showErrors(doc, form, errors);
      if (errors.length > 0 || waiting.length > 0) {
        clear(results);
        if (errors.length > 0) {
          status.textContent = errorStatus(errors);
          var first = how === 'submit' ? field(form, errors[0].field) : null;
          if (first && typeof first.focus === 'function') {
            first.focus();
          }
        } else {
          status.textContent = waitingStatus(waiting.map(function (e) { return e.field; }));
        }
        return;
      }
      if (isEmptyQuery(parsed.query)) {
        clear(results);
        status.textContent = 'Fill in at least one field to search the ' +
          plural(manifest.cycles, 'cycle', 'cycles') + ' of the record.';
        return;
      }
      // While the reader types, "Searching" is said only for a search that takes a while.
      var slow = win.setTimeout(function () {
        if (mine === latest) {
          status.textContent = 'Searching\u2026';
        }
      }, how === 'typing' ? SLOW_MS : 0);
      lookup(index, parsed.query).then(function (result) {
        win.clearTimeout(slow);
        if (mine === latest) {
          renderResults(doc, results, result, rootPath, manifest.cycle_url, manifest.listed);
          status.textContent = statusText(result);
        }
      }, function (error) {
        win.clearTimeout(slow);
        if (mine === latest) {
          clear(results);
          status.textContent = failureText(error);
        }
      });
    }

    form.addEventListener('submit', function (event) {
      event.preventDefault();
      win.clearTimeout(typingTimer);
      typingTimer = null;
      run(readFields(form), 'submit');
    });

    // Search as the reader types, once typing pauses for DEBOUNCE_MS.
    form.addEventListener('input', function () {
      win.clearTimeout(typingTimer);
      typingTimer = win.setTimeout(function () {
        typingTimer = null;
        var fields = readFields(form);
        if (JSON.stringify(fields) !== lastTyped) {
          run(fields, 'typing');
        }
      }, DEBOUNCE_MS);
    });

    var initial = fieldsFromQueryString(win.location ? win.location.search : '');
    if (initial) {
      writeFields(form, initial);
      run(readFields(form), 'address');
    } else if (manifest === null) {
      status.textContent = notLoaded;
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
    mapKey: mapKey,
    resolveMaps: resolveMaps,
    parseQuery: parseQuery,
    unfinished: unfinished,
    errorStatus: errorStatus,
    waitingStatus: waitingStatus,
    showErrors: showErrors,
    isEmptyQuery: isEmptyQuery,
    search: search,
    lookup: lookup,
    statusText: statusText,
    failureText: failureText,
    queryString: queryString,
    fieldsFromQueryString: fieldsFromQueryString,
    normaliseRoot: normaliseRoot,
    crc32: crc32,
    utf8: utf8,
    shardOf: shardOf,
    cycleOfRow: cycleOfRow,
    cycleUrl: cycleUrl,
    openIndex: openIndex,
    renderResults: renderResults,
    setup: setup,
    MAX_SHOWN: MAX_SHOWN,
    DEBOUNCE_MS: DEBOUNCE_MS
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
