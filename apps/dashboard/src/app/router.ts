/**
 * Routes live in the URL hash (#/batches/<id>?tab=x), so the server only ever serves '/', links can be
 * bookmarked and shared, and the back button works.
 */

export interface Route {
  /** Path segments after '#/': ['batches', '<id>']. */
  parts: string[];
  query: URLSearchParams;
  /** The whole route as in the hash, without '#'. */
  raw: string;
}

export function currentRoute(): Route {
  const raw = decodeURI(location.hash.replace(/^#/, '')) || '/board';
  const [path, qs] = raw.split('?', 2) as [string, string | undefined];
  return { parts: path.split('/').filter((p) => p !== ''), query: new URLSearchParams(qs ?? ''), raw };
}

export function navigate(route: string, replace = false): void {
  const hash = `#${route.startsWith('/') ? route : `/${route}`}`;
  if (replace) history.replaceState(null, '', hash);
  else location.hash = hash;
  if (replace) window.dispatchEvent(new HashChangeEvent('hashchange'));
}

/** Replaces the query part of the current route without adding a history entry or re-rendering. */
export function setQuery(query: URLSearchParams): void {
  const route = currentRoute();
  const qs = query.toString();
  history.replaceState(null, '', `#/${route.parts.join('/')}${qs ? `?${qs}` : ''}`);
}
