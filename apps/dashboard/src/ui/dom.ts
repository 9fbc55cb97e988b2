/**
 * A tiny element builder. Text always goes in as text (textContent / text nodes), never as HTML, so
 * a deviation message or a heat number from the API can never inject markup into the page.
 */

export type Child = Node | string | number | null | undefined | false | Child[];

export interface Props {
  class?: string | undefined;
  id?: string;
  /** Attributes set with setAttribute (aria-*, role, type, href, for, ...); false/null/undefined = not set. */
  attrs?: Record<string, string | number | boolean | null | undefined>;
  dataset?: Record<string, string>;
  on?: { [K in keyof HTMLElementEventMap]?: (event: HTMLElementEventMap[K]) => void };
  /** Properties assigned directly (value, checked, disabled, ...). */
  props?: Record<string, unknown>;
}

export function h<K extends keyof HTMLElementTagNameMap>(tag: K, props?: Props | null, ...children: Child[]): HTMLElementTagNameMap[K] {
  const el = document.createElement(tag);
  if (props) {
    if (props.class) el.className = props.class;
    if (props.id) el.id = props.id;
    if (props.attrs) {
      for (const [name, value] of Object.entries(props.attrs)) {
        if (value === false || value === null || value === undefined) continue;
        el.setAttribute(name, value === true ? '' : String(value));
      }
    }
    if (props.dataset) Object.assign(el.dataset, props.dataset);
    if (props.props) Object.assign(el, props.props);
    if (props.on) {
      for (const [type, handler] of Object.entries(props.on)) {
        if (handler) el.addEventListener(type, handler as EventListener);
      }
    }
  }
  append(el, children);
  return el;
}

export function append(parent: Node, children: Child[]): void {
  for (const child of children) {
    if (child === null || child === undefined || child === false) continue;
    if (Array.isArray(child)) append(parent, child);
    else if (child instanceof Node) parent.appendChild(child);
    else parent.appendChild(document.createTextNode(String(child)));
  }
}

/** Replaces all children of `parent`. */
export function replace(parent: Node, ...children: Child[]): void {
  while (parent.firstChild) parent.removeChild(parent.firstChild);
  append(parent, children);
}

/** A link inside the app (hash route). */
export function link(route: string, ...children: Child[]): HTMLAnchorElement {
  return h('a', { attrs: { href: `#${route}` } }, ...children);
}

/** A labelled form field: <label>text <input></label> with an id pairing for screen readers. */
let fieldCounter = 0;
export function field(label: string, control: HTMLElement, hint?: string): HTMLElement {
  const id = control.id || `f${++fieldCounter}`;
  control.id = id;
  const hintEl = hint ? h('span', { class: 'hint', id: `${id}-hint` }, hint) : null;
  if (hintEl) control.setAttribute('aria-describedby', hintEl.id);
  return h('div', { class: 'field' }, h('label', { attrs: { for: id } }, label), control, hintEl);
}

export function button(text: Child, onClick: (event: MouseEvent) => void, options: { kind?: 'primary' | 'danger' | 'plain'; title?: string; disabled?: boolean; type?: 'button' | 'submit' } = {}): HTMLButtonElement {
  return h(
    'button',
    {
      class: `btn ${options.kind ?? 'plain'}`,
      attrs: { type: options.type ?? 'button', title: options.title },
      // A button that is off for good (the role may not do it) is marked so a form that re-enables its
      // buttons after a request leaves it off.
      ...(options.disabled ? { dataset: { locked: 'true' } } : {}),
      props: { disabled: options.disabled ?? false },
      on: { click: onClick },
    },
    text,
  );
}

export function select(options: Array<{ value: string; label: string }>, value: string, onChange?: (value: string) => void): HTMLSelectElement {
  const el = h('select', { on: onChange ? { change: () => onChange(el.value) } : {} }, ...options.map((o) => h('option', { props: { value: o.value, selected: o.value === value } }, o.label)));
  el.value = value;
  return el;
}
