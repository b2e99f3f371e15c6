// Keeps a published copy of the page (dist/, served) usable offline after the first visit.
// Installing caches every file the build listed in offline-files.json under this build's
// version; the page itself is asked of the network first, so a new build reaches planners,
// and comes from the cache when the network does not answer. Everything else is served from
// the cache, falling back to the network.

const VERSION = new URL(self.location.href).searchParams.get('v') ?? 'unversioned';
const CACHE = `forefield-${VERSION}`;

self.addEventListener('install', (event) => {
  event.waitUntil((async () => {
    const response = await fetch('./offline-files.json', { cache: 'no-store' });
    if (!response.ok) throw new Error(`offline-files.json: the server answered ${response.status}`);
    const cache = await caches.open(CACHE);
    await cache.addAll(await response.json());
    await self.skipWaiting();
  })());
});

self.addEventListener('activate', (event) => {
  event.waitUntil((async () => {
    for (const key of await caches.keys()) {
      if (key.startsWith('forefield-') && key !== CACHE) await caches.delete(key);
    }
    await self.clients.claim();
  })());
});

async function fromCache(request) {
  const cache = await caches.open(CACHE);
  return cache.match(request, { ignoreSearch: true });
}

self.addEventListener('fetch', (event) => {
  const { request } = event;
  if (request.method !== 'GET' || new URL(request.url).origin !== self.location.origin) return;
  if (request.mode === 'navigate') {
    event.respondWith(fetch(request).catch(async () => (await fromCache(request))
      ?? (await fromCache(new Request('./'))) ?? Response.error()));
    return;
  }
  event.respondWith((async () => (await fromCache(request)) ?? fetch(request))());
});
