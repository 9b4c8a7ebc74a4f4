// The planner's service worker: keeps the survey pages of the buildings a
// surveyor opened, and the planner's own assets, so that the survey goes on
// without a signal. Served from /sw.js so that its scope is the whole site.
//
// - Survey pages (GET, HTML): network first; without a network, the copy kept
//   here. A page with a query string falls back to its plain path.
// - /static/ assets: from the cache first, refreshed in the background.
// - Everything else (the API, sign-in, sign-out, PDFs, every POST): straight
//   to the network, never kept. Queued changes live in IndexedDB (offline.js),
//   not here.
"use strict";

var VERSION = "1";
var PAGES = "planner-pages-v" + VERSION;
var ASSETS = "planner-assets-v" + VERSION;
var CACHED_AT = "x-planner-cached-at";
// A linked page kept within this long is not fetched again when warming.
var FRESH_MS = 10 * 60 * 1000;
var WARM_LIMIT = 400;
var WARM_PARALLEL = 3;

var ASSET_URLS = [
  "/static/css/planner.css",
  "/static/js/planner.js",
  "/static/js/offline.js",
  "/static/vendor/htmx/htmx.min.js"
];
var SURVEY_PAGES = [
  /^\/$/,
  /^\/buildings$/,
  /^\/buildings\/[0-9a-f-]{36}$/,
  /^\/areas\/[0-9a-f-]{36}$/,
  /^\/areas\/[0-9a-f-]{36}\/fixtures\/new$/,
  /^\/fixtures\/[0-9a-f-]{36}$/,
  /^\/offline\/changes$/,
  /^\/offline\/rules\/fixture\.json$/
];
// Links followed when a page is warmed: a building's areas, an area's forms.
var LINKS = /href="(\/(?:areas\/[0-9a-f-]{36}(?:\/fixtures\/new)?|fixtures\/[0-9a-f-]{36}))"/g;
var MISSING_PAGE = [
  "<!doctype html>",
  '<html lang="en"><head><meta charset="utf-8">',
  '<meta name="viewport" content="width=device-width, initial-scale=1">',
  "<title>Not on this tablet · Emergency Lighting Retrofit Planner</title>",
  '<link rel="stylesheet" href="/static/css/planner.css"></head>',
  '<body><main id="main"><div class="card narrow offline-missing">',
  "<h1>Not on this tablet</h1>",
  "<p>There is no connection, and this page was not opened while there was one, ",
  "so no copy of it is kept here.</p>",
  "<p>Open a building while you have a signal: its areas and fixture forms are then ",
  "kept for use without one.</p>",
  '<p class="toolbar"><a class="button primary" href="/buildings">Buildings</a>',
  '<a class="button quiet" href="/offline/changes">Changes on this tablet</a></p>',
  "</div></main></body></html>"
].join("");
var CSP = "default-src 'self'; script-src 'self'; style-src 'self'; img-src 'self' data: blob:; " +
  "connect-src 'self'; object-src 'none'; base-uri 'self'; form-action 'self'; frame-ancestors 'none'";

function isSurveyPage(path) {
  return SURVEY_PAGES.some(function (pattern) { return pattern.test(path); });
}

function keep(cacheName, key, response) {
  // Stamp the copy with when it was kept, to skip fresh ones when warming.
  return response.blob().then(function (body) {
    var headers = new Headers(response.headers);
    headers.set(CACHED_AT, String(Date.now()));
    var copy = new Response(body, { status: response.status, statusText: response.statusText, headers: headers });
    return caches.open(cacheName).then(function (cache) { return cache.put(key, copy); });
  });
}

function keepable(response) {
  // A redirect (to the sign-in page, say) is never kept in place of the page asked for.
  return response && response.ok && response.status === 200 && !response.redirected &&
    response.type === "basic";
}

function fetchPage(path) {
  return fetch(path, { credentials: "same-origin", cache: "no-store", headers: { Accept: "text/html" } });
}

function fromCache(cacheName, key) {
  return caches.open(cacheName).then(function (cache) {
    return cache.match(key, { ignoreVary: true });
  });
}

function missingPage() {
  return new Response(MISSING_PAGE, {
    status: 503,
    headers: { "Content-Type": "text/html; charset=utf-8", "Content-Security-Policy": CSP }
  });
}

function networkFirst(event, url) {
  var key = url.pathname;
  return fetch(event.request).then(function (response) {
    if (keepable(response) && !url.search) {
      event.waitUntil(keep(PAGES, key, response.clone()));
    }
    return response;
  }, function () {
    return fromCache(PAGES, key).then(function (kept) {
      return kept || missingPage();
    });
  });
}

function cacheFirst(event, url) {
  var key = url.pathname;
  var refresh = fetch(event.request).then(function (response) {
    if (keepable(response)) {
      return keep(ASSETS, key, response.clone()).then(function () { return response; });
    }
    return response;
  });
  return fromCache(ASSETS, key).then(function (kept) {
    if (kept) {
      event.waitUntil(refresh.catch(function () { return null; }));
      return kept;
    }
    return refresh;
  });
}

self.addEventListener("install", function (event) {
  event.waitUntil(
    caches.open(ASSETS)
      .then(function (cache) { return cache.addAll(ASSET_URLS); })
      .catch(function () { return null; })
      .then(function () { return self.skipWaiting(); })
  );
});

self.addEventListener("activate", function (event) {
  event.waitUntil(
    caches.keys().then(function (names) {
      return Promise.all(names.filter(function (name) {
        return name.indexOf("planner-") === 0 && name !== PAGES && name !== ASSETS;
      }).map(function (name) { return caches.delete(name); }));
    }).then(function () { return self.clients.claim(); })
  );
});

self.addEventListener("fetch", function (event) {
  var request = event.request;
  if (request.method !== "GET") {
    return; // writes always go to the network, and are never kept
  }
  var url = new URL(request.url);
  if (url.origin !== self.location.origin) {
    return;
  }
  if (url.pathname.indexOf("/static/") === 0) {
    event.respondWith(cacheFirst(event, url));
  } else if (isSurveyPage(url.pathname)) {
    event.respondWith(networkFirst(event, url));
  }
});

// ---- warming: keep the pages linked from a page the surveyor opened ----

function linksIn(html) {
  var found = [];
  var match;
  LINKS.lastIndex = 0;
  while ((match = LINKS.exec(html)) !== null) {
    if (found.indexOf(match[1]) < 0) {
      found.push(match[1]);
    }
  }
  return found;
}

function keptAt(response) {
  return Number((response && response.headers.get(CACHED_AT)) || 0);
}

// Fetch ``path`` (unless a fresh copy is kept and ``force`` is false), keep
// it, and return its HTML for the links it holds ("" when it is not a page).
// The page being looked at was kept by its own navigation a moment ago.
function warmOne(path, force, looking) {
  return fromCache(PAGES, path).then(function (kept) {
    var age = Date.now() - keptAt(kept);
    if (kept && !force && age < (looking ? 60 * 1000 : FRESH_MS)) {
      return kept.text();
    }
    return fetchPage(path).then(function (response) {
      if (!keepable(response)) {
        return "";
      }
      return keep(PAGES, path, response.clone()).then(function () { return response.text(); });
    }, function () { return kept ? kept.text() : ""; });
  });
}

// Keep ``start`` and, ``depth`` links deep, the survey pages it links to,
// level by level, a few at a time. Resolves to the number of pages kept.
function warm(start, depth, force) {
  var seen = {};
  var kept = 0;
  seen[start] = true;
  function level(paths, remaining, first) {
    var next = [];
    var index = 0;
    function worker() {
      if (index >= paths.length || kept >= WARM_LIMIT) {
        return Promise.resolve();
      }
      var path = paths[index];
      index += 1;
      return warmOne(path, force, first).then(function (html) {
        if (!html) {
          return;
        }
        kept += 1;
        if (remaining > 0) {
          linksIn(html).forEach(function (link) {
            if (!seen[link]) {
              seen[link] = true;
              next.push(link);
            }
          });
        }
      }).catch(function () { return null; }).then(worker);
    }
    var workers = [];
    for (var count = 0; count < WARM_PARALLEL; count += 1) {
      workers.push(worker());
    }
    return Promise.all(workers).then(function () {
      return next.length ? level(next, remaining - 1, false) : kept;
    });
  }
  return level([start], depth, true);
}

function answer(event, message) {
  if (event.ports && event.ports[0]) {
    event.ports[0].postMessage(message);
  }
}

self.addEventListener("message", function (event) {
  var data = event.data || {};
  if (data.type === "warm" && Array.isArray(data.pages)) {
    var pages = data.pages.filter(function (page) {
      return page && typeof page.path === "string" && isSurveyPage(page.path);
    });
    // Pages known to have changed (after a sync) are fetched again first.
    var stale = (Array.isArray(data.refresh) ? data.refresh : []).filter(function (path) {
      return typeof path === "string" && isSurveyPage(path);
    });
    event.waitUntil(
      Promise.all(stale.map(function (path) {
        return warmOne(path, true, false).catch(function () { return ""; });
      })).then(function () {
        return Promise.all(pages.map(function (page) {
          return warm(page.path, Math.max(0, Math.min(2, page.depth | 0)), Boolean(page.force));
        }));
      }).then(function (counts) {
        answer(event, { type: "warmed", pages: counts.reduce(function (a, b) { return a + b; }, 0) });
      }, function () { answer(event, { type: "warmed", pages: 0 }); })
    );
  } else if (data.type === "forget") {
    // Signing out: another person may sign in on this tablet next.
    event.waitUntil(caches.delete(PAGES).then(function () { answer(event, { type: "forgotten" }); }));
  }
});
