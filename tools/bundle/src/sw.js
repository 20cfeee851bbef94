// Rangefit's service worker, written by rangefit-bundle for one build: V names the build, F lists its files
// with their sizes ("" is the page). It caches exactly those files, serves them, and falls back to the
// network whenever the cache cannot (missing, damaged, refused for quota).
const V = "__VERSION__", F = __FILES__;
const keep = b => new Response(b, { headers: { "content-type": b.type } });
self.oninstall = e => e.waitUntil((async () => {
  const rs = await Promise.all(F.map(([k]) => fetch(k || "./", { cache: "no-cache" })));
  const bs = await Promise.all(rs.map(r => r.ok ? r.blob() : null));
  const page = bs[0] ? await bs[0].text() : "";
  // One build only: every file as listed, and the page naming every other file.
  if (bs.some((b, i) => !b || b.size != F[i][1] || (i && !page.includes(F[i][0])))) throw new Error("mixed build");
  const c = await caches.open(V);
  try { await Promise.all(bs.map((b, i) => c.put(F[i][0] || "./", keep(b)))); }
  catch (x) { await caches.delete(V); throw x; }
})());
self.onactivate = e => e.waitUntil(caches.keys()
  .then(ks => Promise.all(ks.filter(k => k != V && k.startsWith("rangefit-")).map(k => caches.delete(k))))
  .catch(() => {}));
self.onfetch = e => {
  const r = e.request, u = new URL(r.url), s = new URL(registration.scope);
  if (r.method != "GET" || u.origin != s.origin || !u.pathname.startsWith(s.pathname)) return;
  const k = u.pathname.slice(s.pathname.length).replace(/^index\.html$/, ""), f = F.find(x => x[0] == k);
  if (!f) return;
  e.respondWith(caches.open(V).then(c => c.match(k || "./")).then(m => m && m.ok && m.blob())
    .then(b => b && b.size == f[1] ? keep(b) : fetch(r), () => fetch(r)));
};
