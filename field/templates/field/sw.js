{% autoescape off %}/* Rimewatch Field's service worker (scope /field/): keeps the app's own files for use with no
   signal, and the API's answers to GETs as a fallback (network first, so a good signal always
   shows the latest). Writes are never touched here: the app's outbox sends them. */
const VERSION = {{ version }};
const FILES = {{ files }};
const SHELL_CACHE = `rimewatch-field-shell-${VERSION}`;
const API_CACHE = "rimewatch-field-api";
/* Waiting longer than this for the network, with a kept copy at hand, shows the copy. */
const PATIENCE_MS = 8000;

self.addEventListener("install", (event) => {
  event.waitUntil(
    caches.open(SHELL_CACHE).then((cache) => cache.addAll(FILES)).then(() => self.skipWaiting()),
  );
});

self.addEventListener("activate", (event) => {
  event.waitUntil(
    caches
      .keys()
      .then((keys) =>
        Promise.all(
          keys
            .filter((key) => key.startsWith("rimewatch-field-shell-") && key !== SHELL_CACHE)
            .map((key) => caches.delete(key)),
        ),
      )
      .then(() => self.clients.claim()),
  );
});

async function networkFirst(request, cacheName) {
  const cache = await caches.open(cacheName);
  const kept = await cache.match(request, { ignoreVary: true });
  const fetching = fetch(request).then((response) => {
    if (response.ok) cache.put(request, response.clone());
    return response;
  });
  if (!kept) return fetching;
  const patience = new Promise((resolve) => setTimeout(() => resolve(kept), PATIENCE_MS));
  return Promise.race([fetching.catch(() => kept), patience]);
}

self.addEventListener("fetch", (event) => {
  const request = event.request;
  if (request.method !== "GET") return;
  const url = new URL(request.url);
  if (url.origin !== self.location.origin) return;
  if (url.pathname.startsWith("/api/")) {
    event.respondWith(networkFirst(request, API_CACHE));
  } else if (FILES.includes(url.pathname)) {
    event.respondWith(networkFirst(new Request(url.pathname), SHELL_CACHE));
  }
});
{% endautoescape %}
