/*
 * Runs the search page's script under node against a built index, for tests/site/test_search_index.py.
 *
 *   node search_driver.js SEARCH_JS SITE_ROOT [alone] < queries.json
 *
 * queries.json is a list of raw field values ({member, map, length, word}). For each query it
 * prints one JSON line with two results:
 *   sharded: the page's own lookup, through its own loader (openIndex), with a document whose
 *            script elements are read from SITE_ROOT and run as a browser would (asynchronously,
 *            then onload, or onerror for a missing file); a fresh loader per query, so the files
 *            it names are those that query loads;
 *   whole:   the reference search() over every cycle of the index at once (rows, words and
 *            members gathered from every shard).
 * With "alone", only the sharded lookup runs (for an index with a file missing). A query whose
 * fields do not parse prints {error, errors}, and an empty one {empty: true} (the page answers both
 * itself).
 *
 *   node search_driver.js SEARCH_JS calls < calls.json
 *
 * calls.json is a list of [name, ...arguments]: for each it prints one JSON line, the value of the
 * script's own function of that name for those arguments (for the helpers that need no index).
 */
'use strict';

const fs = require('fs');
const path = require('path');
const vm = require('vm');

const api = require(path.resolve(process.argv[2]));
const calls = process.argv[3] === 'calls';
const site = calls ? null : path.resolve(process.argv[3]);
const alone = process.argv[4] === 'alone';

function fakeWindow() {
  const win = { PeriplusSearchData: [], loaded: [] };
  const context = vm.createContext({ window: win });
  const run = (file) => vm.runInContext(fs.readFileSync(file, 'utf8'), context, { filename: file });
  const head = {
    appendChild(el) {
      el.parentNode = head;
      const file = path.join(site, el.src);
      setImmediate(() => {
        if (!fs.existsSync(file)) {
          el.onerror();
          return;
        }
        win.loaded.push({ src: el.src, bytes: fs.statSync(file).size });
        run(file);
        el.onload();
      });
    },
    removeChild(el) {
      el.parentNode = null;
    }
  };
  win.document = { head, createElement: () => ({}) };
  run(path.join(site, 'data', 'search-index.js'));
  return win;
}

function data(name) {
  const win = { PeriplusSearchData: [] };
  vm.runInContext(fs.readFileSync(path.join(site, 'data', 'search', name + '.js'), 'utf8'), vm.createContext({ window: win }));
  const item = win.PeriplusSearchData[0];
  if (item[0] !== name) {
    throw new Error(name + ' hands over ' + item[0]);
  }
  return item[1];
}

function wholeIndex(manifest) {
  const cycles = [];
  manifest.rows.forEach((_, i) => data('r' + i).forEach((row) => cycles.push(api.cycleOfRow(row))));
  manifest.words.forEach((start, i) => data('w' + i).forEach((item, j) => {
    cycles[start + j].word = Array.isArray(item) ? item[0] : item;
  }));
  cycles.forEach((c) => { c.members = []; });
  const give = (member, rows) => rows.forEach((row) => cycles[row[0]].members.push(member));
  for (let i = 0; i < manifest.members; i++) {
    const shard = data('m' + i);
    for (const member of Object.keys(shard)) {
      const entry = shard[member];
      if (Array.isArray(entry)) {
        give(member, entry);
      } else {
        for (let x = entry.x[0]; x < entry.x[1]; x++) {
          give(member, data('x' + x));
        }
      }
    }
  }
  const maps = [];
  const seen = new Set();
  for (let i = 0; i < manifest.keys; i++) {
    const shard = data('k' + i);
    Object.keys(shard).forEach((k) => shard[k].forEach((e) => {
      if (!seen.has(e[0])) {
        seen.add(e[0]);
        maps.push({ map: e[0], map_name: e[1] });
      }
    }));
  }
  return { cycles, maps };
}

function summary(result) {
  return {
    count: result.count,
    ranks: result.matches.slice(0, api.MAX_SHOWN).map((c) => c.rank),
    shown: result.matches.slice(0, 3).map((c) => [c.map_name, c.canonical, c.length, c.members_truncated]),
    unsearchable: result.unsearchable,
    truncatedAt: result.truncatedAt,
    mapFallback: result.mapFallback,
    status: api.statusText(result)
  };
}

function callEach() {
  for (const [name, ...args] of JSON.parse(fs.readFileSync(0, 'utf8'))) {
    const value = api[name](...args);
    process.stdout.write(JSON.stringify(value === undefined ? null : value) + '\n');
  }
}

async function main() {
  if (calls) {
    callEach();
    return;
  }
  const queries = JSON.parse(fs.readFileSync(0, 'utf8'));
  const manifest = fakeWindow().PeriplusSearchData[0][1];
  const whole = alone ? null : wholeIndex(manifest);
  for (const fields of queries) {
    const parsed = api.parseQuery(fields);
    if (parsed.error) {
      process.stdout.write(JSON.stringify({ error: parsed.error, errors: parsed.errors }) + '\n');
      continue;
    }
    if (api.isEmptyQuery(parsed.query)) {
      process.stdout.write(JSON.stringify({ empty: true }) + '\n');
      continue;
    }
    const win = fakeWindow();
    const index = api.openIndex(win, '');
    let sharded;
    try {
      sharded = summary(await api.lookup(index, parsed.query));
    } catch (error) {
      sharded = { failed: api.failureText(error) };
    }
    sharded.loaded = win.loaded;
    const reference = whole && summary(api.search(whole.cycles, parsed.query, whole.maps));
    process.stdout.write(JSON.stringify({ sharded, whole: reference }) + '\n');
  }
}

main().catch((error) => {
  process.stderr.write(String(error && error.stack ? error.stack : error) + '\n');
  process.exit(1);
});
