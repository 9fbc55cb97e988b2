import type { LoginReply } from '../api/types.js';
import type { ViewFactory } from '../app/view.js';
import { navigate } from '../app/router.js';
import { plantZoneLabel } from '../lib/time.js';
import { button, field, h, replace } from '../ui/dom.js';
import { ApiError } from '../api/client.js';
import { errorBox, showError } from '../ui/notice.js';

/** Sign-in with e-mail and password (POST /v1/auth/login); the session lasts one shift (SESSION_TTL_MIN). */
export const signInView: ViewFactory = (ctx, route) => {
  const message = route.query.get('reason');
  const next = route.query.get('next') || '/board';
  const email = h('input', { attrs: { type: 'email', autocomplete: 'username', required: true, name: 'email' } });
  const password = h('input', { attrs: { type: 'password', autocomplete: 'current-password', required: true, name: 'password' } });
  const errors = h('div', { attrs: { 'aria-live': 'assertive' } });
  const submit = button('Sign in', () => undefined, { kind: 'primary', type: 'submit' });

  const form = h(
    'form',
    {
      class: 'signin-form',
      attrs: { novalidate: true },
      on: {
        submit: (e) => {
          e.preventDefault();
          void signIn();
        },
      },
    },
    field('E-mail', email),
    field('Password', password),
    submit,
  );

  async function signIn(): Promise<void> {
    replace(errors);
    if (!email.value.trim() || !password.value) {
      replace(errors, h('div', { class: 'notice error', attrs: { role: 'alert' } }, 'Enter your e-mail and password.'));
      return;
    }
    submit.disabled = true;
    submit.textContent = 'Signing in…';
    try {
      const reply = await ctx.api.post<LoginReply>('/v1/auth/login', { email: email.value.trim(), password: password.value });
      ctx.signedIn(reply);
      navigate(next.startsWith('/signin') ? '/board' : next, true);
    } catch (error) {
      password.value = '';
      if (error instanceof ApiError && error.status === 401) {
        replace(errors, errorBox({ title: 'Sign-in refused', detail: `${error.message}. Check both and try again; after repeated failures ask an admin.`, issues: [] }));
      } else {
        showError(errors, error, 'Signing in');
      }
      password.focus();
    } finally {
      submit.disabled = false;
      submit.textContent = 'Sign in';
    }
  }

  const el = h(
    'section',
    { class: 'signin' },
    h('div', { class: 'signin-card' },
      h('div', { class: 'brand-big' }, h('span', { class: 'brand-mark', attrs: { 'aria-hidden': 'true' } }), 'Ausline'),
      h('h1', null, 'Sign in'),
      h('p', { class: 'muted' }, 'Austempering line records, predictions and deviations.'),
      message ? h('div', { class: 'notice info', attrs: { role: 'status' } }, message) : null,
      errors,
      form,
      h('p', { class: 'muted small' }, `Plant times are shown in ${plantZoneLabel(ctx.plantZone)}.`),
    ),
  );
  queueMicrotask(() => email.focus());
  return { el, title: 'Sign in' };
};
