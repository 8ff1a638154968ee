// The 404 page's links.  A static host serves 404.html at whatever address was asked for, at any depth,
// so its relative links would resolve against that address.  Served over http(s), this makes them
// absolute-path links under the site's root path: the record's published address's path (the script
// element's data-site-root), or "/" when the address asked for is not under it.  Opened from disk, the
// file is in the site's root folder, where its relative links already work, and nothing is changed.
// The page carries this script and its stylesheet inside it, since no relative address can be relied on.
(function () {
  "use strict";
  if (!/^https?:$/.test(location.protocol)) return;
  var root = document.currentScript.getAttribute("data-site-root") || "/";
  if (location.pathname.indexOf(root) !== 0) root = "/";
  var links = document.querySelectorAll("a[href], link[href]");
  for (var i = 0; i < links.length; i++) {
    var href = links[i].getAttribute("href");
    if (!/^(?:[a-z][a-z0-9+.-]*:|#|\/)/i.test(href)) links[i].setAttribute("href", root + href);
  }
})();
