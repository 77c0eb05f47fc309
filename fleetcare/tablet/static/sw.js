// FleetCare service worker: keeps the entry screens on the tablet for use without a connection.
// Pages: network first, the kept copy when the network fails, else the offline page.
// Styles and scripts: the kept copy first. The API itself is never answered from the cache,
// except the battery list the offline page shows.
"use strict";

var PAGES = "fleetcare-pages-v2";
var ASSETS = "fleetcare-assets-v2";
var OFFLINE_PAGE = "/api/offline/";
var BATTERY_LIST = "/api/batteries";
// The crew's screens: today's work, find, all cells / pilot cell / block voltages, water, equalizing.
var KEPT_PAGES = [/^\/readings\/find\/$/, /^\/labels\/scan\/$/, /^\/readings\/battery\/\d+\/inspect\/$/, /^\/readings\/battery\/\d+\/water\/$/,
                  /^\/planner\/battery\/\d+\/equalizing\/$/, /^\/planner\/[\w-]+\/today\/$/,
                  /^\/api\/offline\/$/, /^\/api\/outbox\/$/];

self.addEventListener("install", function (event) {
  event.waitUntil(caches.open(PAGES).then(function (cache) {
    return cache.add(new Request(OFFLINE_PAGE, {credentials: "same-origin"})).catch(function () {});
  }).then(function () { return self.skipWaiting(); }));
});

self.addEventListener("activate", function (event) {
  event.waitUntil(caches.keys().then(function (names) {
    return Promise.all(names.filter(function (name) {
      return name.indexOf("fleetcare-") === 0 && name !== PAGES && name !== ASSETS;
    }).map(function (name) { return caches.delete(name); }));
  }).then(function () { return self.clients.claim(); }));
});

// `via=` says how the battery was picked (scan, search, ...). Offline, a page asked for with it is answered
// with the copy kept without it (the page's script reads `via` from the address); only copies fetched
// without it are kept, so a kept page never carries another visit's `via`.
function withoutVia(url) {
  var bare = new URL(url.href);
  bare.searchParams.delete("via");
  return bare;
}

function keepable(url) {
  // Searches (find?q=...) are not kept: offline, the offline page filters the kept battery list instead.
  if (url.search && !/^\?scope=(all|pilot)$/.test(url.search)) return false;
  return url.pathname === BATTERY_LIST || KEPT_PAGES.some(function (pattern) { return pattern.test(url.pathname); });
}

function isSignInPage(response) {
  return response.redirected && new URL(response.url).pathname.indexOf("/accounts/login") === 0;
}

function keep(cacheName, request, response) {
  if (!response || !response.ok || response.type !== "basic" || isSignInPage(response)) return;
  var copy = response.clone();
  caches.open(cacheName).then(function (cache) { cache.put(request, copy); });
}

function precache(list) {
  // One at a time and ignoring failures: a page that went away must not stop the rest being kept.
  return caches.open(PAGES).then(function (pages) {
    return caches.open(ASSETS).then(function (assets) {
      var jobs = list.pages.map(function (url) {
        return fetch(url, {credentials: "same-origin"}).then(function (response) {
          if (response.ok && !isSignInPage(response)) return pages.put(url, response);
        }).catch(function () {});
      }).concat(list.assets.map(function (url) {
        return assets.add(url).catch(function () {});
      }));
      return Promise.all(jobs);
    });
  });
}

self.addEventListener("message", function (event) {
  var data = event.data || {};
  if (data.type === "forget") {
    event.waitUntil(caches.open(PAGES).then(function (cache) {
      return cache.keys().then(function (requests) {
        return Promise.all(requests.filter(function (request) {
          return new URL(request.url).pathname !== OFFLINE_PAGE;
        }).map(function (request) { return cache.delete(request); }));
      });
    }));
  }
  if (data.type === "precache" && data.source) {
    var work = fetch(data.source, {credentials: "same-origin", headers: {Accept: "application/json"}})
      .then(function (response) { return response.ok ? response.json() : null; })
      .then(function (list) { return list ? precache(list).then(function () { return list.pages.length; }) : 0; })
      .catch(function () { return 0; })
      .then(function (count) {
        if (event.source) event.source.postMessage({type: "precached", pages: count});
      });
    event.waitUntil(work);
  }
});

function pageFromNetwork(request) {
  var asked = new URL(request.url);
  var url = withoutVia(asked);
  return fetch(request).then(function (response) {
    if (url.href === asked.href && keepable(url)) keep(PAGES, request, response);
    return response;
  }).catch(function () {
    return caches.open(PAGES).then(function (cache) {
      return cache.match(url.href, {ignoreVary: true}).then(function (hit) {
        // A task's link carries the situation (?scope=all&situation=equalized): the kept page for that
        // scope stands in, and the entry screen picks the situation from the address itself.
        if (hit || !url.search || !/^\/readings\/battery\/\d+\/inspect\/$/.test(url.pathname)) return hit;
        var scope = url.searchParams.get("scope");
        var plain = url.origin + url.pathname;
        var scoped = scope === "pilot" ? cache.match(plain + "?scope=pilot", {ignoreVary: true}) : Promise.resolve();
        return scoped.then(function (page) { return page || cache.match(plain, {ignoreVary: true}); });
      }).then(function (hit) {
        if (hit) return hit;
        if (request.mode !== "navigate") return Response.error();
        return cache.match(OFFLINE_PAGE, {ignoreVary: true}).then(function (page) { return page || Response.error(); });
      });
    });
  });
}

function assetFromCache(request) {
  // The kept copy at once, refreshed in the background for next time.
  return caches.open(ASSETS).then(function (cache) {
    return cache.match(request, {ignoreVary: true}).then(function (hit) {
      var fresh = fetch(request).then(function (response) {
        keep(ASSETS, request, response);
        return response;
      });
      if (hit) {
        fresh.catch(function () {});
        return hit;
      }
      return fresh;
    });
  });
}

self.addEventListener("fetch", function (event) {
  var request = event.request;
  if (request.method !== "GET") return;
  var url = new URL(request.url);
  if (url.origin !== self.location.origin) return;
  if (url.pathname.indexOf("/static/") === 0) {
    event.respondWith(assetFromCache(request));
  } else if (request.mode === "navigate" || url.pathname === BATTERY_LIST) {
    event.respondWith(pageFromNetwork(request));
  }
});
