import { ApiClient } from '../api/client.js';
import { LiveStream } from '../api/stream.js';
import type { Line, LoginReply, PublicUser, Role, Spec } from '../api/types.js';

/**
 * What every view shares: the API client, the live stream, the signed-in person, the plant time zone
 * and a few lists that change rarely (lines, specs), cached per page load and refreshed on demand.
 */

export interface Session {
  token: string;
  expiresAt: string;
  user: PublicUser;
}

const SESSION_KEY = 'ausline.session';

/** The plant's time zone as the server filled it into index.html; the browser's own only as a labelled fallback. */
function readPlantZone(): { zone: string; fromServer: boolean } {
  const meta = document.querySelector<HTMLMetaElement>('meta[name="ausline-plant-time-zone"]');
  const value = meta?.content ?? '';
  if (value && !value.startsWith('__')) {
    try {
      new Intl.DateTimeFormat('en', { timeZone: value });
      return { zone: value, fromServer: true };
    } catch {
      // fall through
    }
  }
  return { zone: Intl.DateTimeFormat().resolvedOptions().timeZone || 'UTC', fromServer: false };
}

export class AppContext {
  readonly api = new ApiClient();
  readonly stream = new LiveStream(this.api);
  readonly plantZone: string;
  readonly plantZoneFromServer: boolean;
  session: Session | null = null;
  private linesCache: Promise<Line[]> | null = null;
  private specsCache: Promise<Spec[]> | null = null;

  constructor() {
    const z = readPlantZone();
    this.plantZone = z.zone;
    this.plantZoneFromServer = z.fromServer;
    this.session = loadSession();
    if (this.session) this.api.setToken(this.session.token);
  }

  get roles(): Role[] {
    return this.session?.user.roles ?? [];
  }

  hasRole(...roles: Role[]): boolean {
    return this.roles.some((r) => roles.includes(r));
  }

  signedIn(reply: LoginReply): void {
    this.session = { token: reply.token, expiresAt: reply.expiresAt, user: reply.user };
    this.api.setToken(reply.token);
    try {
      localStorage.setItem(SESSION_KEY, JSON.stringify(this.session));
    } catch {
      // storage full or blocked: the session lasts for this page only
    }
    this.invalidate();
  }

  signedOut(): void {
    this.session = null;
    this.api.setToken(null);
    this.stream.stop();
    try {
      localStorage.removeItem(SESSION_KEY);
    } catch {
      // nothing stored
    }
    this.invalidate();
  }

  invalidate(): void {
    this.linesCache = null;
    this.specsCache = null;
  }

  lines(refresh = false): Promise<Line[]> {
    if (refresh || !this.linesCache) {
      this.linesCache = this.api.get<Line[]>('/v1/lines');
      this.linesCache.catch(() => (this.linesCache = null));
    }
    return this.linesCache;
  }

  specs(refresh = false): Promise<Spec[]> {
    if (refresh || !this.specsCache) {
      this.specsCache = this.api.get<Spec[]>('/v1/specs');
      this.specsCache.catch(() => (this.specsCache = null));
    }
    return this.specsCache;
  }
}

function loadSession(): Session | null {
  try {
    const raw = localStorage.getItem(SESSION_KEY);
    if (!raw) return null;
    const s = JSON.parse(raw) as Session;
    if (!s.token || !s.user || Date.parse(s.expiresAt) <= Date.now()) {
      localStorage.removeItem(SESSION_KEY);
      return null;
    }
    return s;
  } catch {
    return null;
  }
}
