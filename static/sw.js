// Hysteron's service worker: keeps the page's files so the page opens without a network after the
// first visit.
//
// This file is a template: after each build `cargo xtask post-build` (a Trunk post-build hook, see
// xtask/src/offline.rs) writes it to dist/sw.js with VERSION set to a hash of every built file and
// FILES set to the list of them. A new build therefore gives a new sw.js, which the browser notices
// on its next visit: the new worker stores the new files in a cache of its own name, takes over
// at once, and deletes every older Hysteron cache. The page that is already open keeps running; the
// next load shows the new build.
//
// Requests: the page itself (any navigation inside the scope, whatever its query or #share-link)
// is answered with the kept index.html, then the network; the kept files (their names carry content
// hashes) from the cache, then the network; anything else from the network, then the cache.
'use strict';

const VERSION = '__HYSTERON_VERSION__';
const FILES = ['__HYSTERON_FILES__'];
const PREFIX = 'hysteron-';
const CACHE = PREFIX + VERSION;
const PAGE = new URL('index.html', self.registration.scope).href;

self.addEventListener('install', (event) => {
  event.waitUntil(
    caches.open(CACHE)
      // `reload` skips the browser's HTTP cache so the kept copy is the one just built.
      .then((cache) => cache.addAll(FILES.map((f) => new Request(f, { cache: 'reload' }))))
      .then(() => self.skipWaiting()),
  );
});

self.addEventListener('activate', (event) => {
  event.waitUntil(
    caches.keys()
      .then((names) => Promise.all(
        names.filter((n) => n.startsWith(PREFIX) && n !== CACHE).map((n) => caches.delete(n)),
      ))
      .then(() => self.clients.claim()),
  );
});

self.addEventListener('fetch', (event) => {
  const request = event.request;
  if (request.method !== 'GET' || !request.url.startsWith(self.registration.scope)) {
    return;
  }
  if (request.mode === 'navigate') {
    event.respondWith(
      caches.open(CACHE)
        .then((cache) => cache.match(PAGE))
        .then((kept) => kept || fetch(request)),
    );
    return;
  }
  event.respondWith(
    caches.open(CACHE)
      .then((cache) => cache.match(request, { ignoreSearch: true }))
      .then((kept) => kept || fetch(request).catch((err) =>
        caches.match(request, { ignoreSearch: true }).then((any) => any || Promise.reject(err)))),
  );
});
