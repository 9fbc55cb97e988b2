import type { AppContext } from './context.js';
import type { Route } from './router.js';

/** A screen. `el` is shown at once (with its own loading state); dispose() runs when leaving it. */
export interface View {
  el: HTMLElement;
  title: string;
  dispose?(): void;
}

export type ViewFactory = (ctx: AppContext, route: Route) => View;
