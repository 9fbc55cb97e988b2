import './styles.css';
import type { ApiError } from './api/client.js';
import type { StreamState } from './api/stream.js';
import { AppContext } from './app/context.js';
import { currentRoute, navigate } from './app/router.js';
import type { View, ViewFactory } from './app/view.js';
import { formatClock, formatDuration, plantZoneLabel } from './lib/time.js';
import { h, replace } from './ui/dom.js';
import { adminView } from './views/admin.js';
import { batchView } from './views/batch.js';
import { batchesView } from './views/batches.js';
import { boardView } from './views/board.js';
import { calibrationView } from './views/calibration.js';
import { certificateView } from './views/certificate.js';
import { deviationsView } from './views/deviations.js';
import { driftView } from './views/drift.js';
import { heatView } from './views/heat.js';
import { heatsView } from './views/heats.js';
import { pyrometryView } from './views/pyrometry.js';
import { signInView } from './views/signin.js';

/**
 * The shell: header (navigation, live-stream state, plant time zone, who is signed in) and the current
 * view, chosen by the URL hash.
 */

const ctx = new AppContext();
const root = document.getElementById('app')!;

const ROUTES: Record<string, ViewFactory> = {
  signin: signInView,
  board: boardView,
  batches: (c, r) => (r.parts[2] === 'certificate' ? certificateView(c, r) : r.parts[1] ? batchView(c, r) : batchesView(c, r)),
  lots: certificateView,
  drift: driftView,
  heats: (c, r) => (r.parts[1] ? heatView(c, r) : heatsView(c, r)),
  deviations: deviationsView,
  pyrometry: pyrometryView,
  admin: adminView,
  calibration: calibrationView,
};

const NAV: Array<{ route: string; label: string; key: string }> = [
  { route: '/board', label: 'Live board', key: 'board' },
  { route: '/batches', label: 'Loads', key: 'batches' },
  { route: '/heats', label: 'Heats', key: 'heats' },
  { route: '/deviations', label: 'Deviations', key: 'deviations' },
  { route: '/drift', label: 'Drift', key: 'drift' },
  { route: '/pyrometry', label: 'Pyrometry', key: 'pyrometry' },
  { route: '/admin', label: 'Plant & specs', key: 'admin' },
];

const main = h('main', { id: 'main', attrs: { tabindex: '-1' } });
const header = h('header', { class: 'topbar' });
const skip = h('a', { class: 'skip', attrs: { href: '#main' }, on: { click: (e) => { e.preventDefault(); main.focus(); } } }, 'Skip to content');
root.append(skip, header, main);

let view: View | null = null;
let streamPill: HTMLElement | null = null;
let streamTimer: number | null = null;

ctx.api.onSessionEnded = (error: ApiError) => {
  if (!ctx.session) return;
  ctx.signedOut();
  navigate(`/signin?reason=${encodeURIComponent(`${error.message}. Sign in again.`)}&next=${encodeURIComponent(currentRoute().raw)}`, true);
};

function streamText(state: StreamState): { text: string; cls: string; title: string } {
  const now = Date.now();
  switch (state.status) {
    case 'live':
      return { text: 'Live', cls: 'live', title: `Live updates on; last signal ${formatClock(state.lastSeenAt, ctx.plantZone, true)}` };
    case 'connecting':
      return { text: 'Connecting…', cls: 'connecting', title: 'Opening the live update stream' };
    case 'reconnecting':
      return {
        text: `Reconnecting (updates lost ${formatDuration(now - (state.lostAt ?? now))})`,
        cls: 'reconnecting',
        title: 'Figures on screen may be out of date until the stream is back',
      };
    case 'down':
      return {
        text: `Updates DOWN since ${formatClock(state.lostAt, ctx.plantZone)}: data may be stale`,
        cls: 'down',
        title: 'The live update stream is down. Reload the page or check the network; the screen does not update by itself meanwhile.',
      };
    case 'stopped':
      return { text: 'Not connected', cls: 'down', title: 'Not signed in' };
  }
}

function renderStreamPill(state: StreamState = ctx.stream.current): void {
  if (!streamPill) return;
  const s = streamText(state);
  streamPill.className = `stream-pill ${s.cls}`;
  streamPill.title = s.title;
  replace(streamPill, h('span', { class: 'dot', attrs: { 'aria-hidden': 'true' } }), s.text);
}

function renderHeader(activeKey: string): void {
  if (!ctx.session) {
    replace(header);
    header.hidden = true;
    return;
  }
  header.hidden = false;
  const user = ctx.session.user;
  streamPill = h('div', { class: 'stream-pill', attrs: { role: 'status', 'aria-live': 'polite' } });
  replace(
    header,
    h('a', { class: 'brand', attrs: { href: '#/board', 'aria-label': 'Ausline, live board' } }, h('span', { class: 'brand-mark', attrs: { 'aria-hidden': 'true' } }), 'Ausline'),
    h(
      'nav',
      { attrs: { 'aria-label': 'Main' } },
      h('ul', null, ...NAV.map((n) => h('li', null, h('a', { attrs: { href: `#${n.route}`, 'aria-current': n.key === activeKey ? 'page' : undefined } }, n.label)))),
    ),
    streamPill,
    h('div', { class: 'tz', attrs: { title: ctx.plantZoneFromServer ? 'Plant time zone (PLANT_TIME_ZONE)' : 'The server did not give a plant time zone; this is the browser\u2019s' } },
      'Times: ', h('strong', null, plantZoneLabel(ctx.plantZone)), ctx.plantZoneFromServer ? null : ' (browser zone)'),
    h(
      'div',
      { class: 'who' },
      h('span', { class: 'who-name' }, user.displayName),
      h('span', { class: 'who-roles' }, user.roles.map((r) => r.toLowerCase()).join(', ')),
      h('button', { class: 'btn plain small', attrs: { type: 'button' }, on: { click: () => void signOut() } }, 'Sign out'),
    ),
  );
  renderStreamPill();
}

async function signOut(): Promise<void> {
  try {
    await ctx.api.post('/v1/auth/logout');
  } catch {
    // the session is dropped locally either way
  }
  ctx.signedOut();
  navigate('/signin?reason=Signed%20out.', true);
}

function render(): void {
  const route = currentRoute();
  const key = route.parts[0] ?? 'board';
  if (!ctx.session && key !== 'signin') {
    navigate(`/signin?next=${encodeURIComponent(route.raw)}`, true);
    return;
  }
  if (ctx.session && key === 'signin') {
    navigate('/board', true);
    return;
  }
  view?.dispose?.();
  const factory = ROUTES[key];
  renderHeader(key);
  if (ctx.session) ctx.stream.start();
  view = factory
    ? factory(ctx, route)
    : { el: h('section', null, h('h1', null, 'Page not found'), h('p', null, 'There is no screen at this address. '), h('a', { attrs: { href: '#/board' } }, 'Go to the live board')), title: 'Not found' };
  document.title = `${view.title} · Ausline`;
  replace(main, view.el);
  document.body.dataset['view'] = key;
  const heading = main.querySelector('h1');
  if (heading && key !== 'signin') {
    heading.setAttribute('tabindex', '-1');
    heading.focus({ preventScroll: true });
  }
}

ctx.stream.onStatus((s) => renderStreamPill(s));
streamTimer = window.setInterval(() => renderStreamPill(), 1000);
window.addEventListener('hashchange', render);
window.addEventListener('beforeunload', () => {
  if (streamTimer !== null) window.clearInterval(streamTimer);
  ctx.stream.stop();
});
render();
