// Sign-in: the server prints a one-time link (/signin?token=...) that sets a
// cookie; an API token (from `earshot token issue`) can be pasted instead and
// is kept for this browser tab only.
import { ApiError, storeToken } from '../api.ts';
import { refreshSession } from '../session.ts';
import { errorText, field, h, notice } from '../ui.ts';

export function renderSignIn(main: HTMLElement, onSignedIn: () => Promise<void>): void {
  const input = h('input', { type: 'password', name: 'token', autocomplete: 'off', spellcheck: 'false', required: true, class: 'wide' });
  const status = h('div', { 'aria-live': 'polite' });
  const form = h(
    'form',
    { class: 'card signin-card', 'aria-labelledby': 'signin-title' },
    h('h1', { id: 'signin-title' }, h('span', { class: 'brand-mark', 'aria-hidden': 'true' }, '◠'), ' earshot'),
    h('p', { class: 'lede' }, 'Plan sub-GHz sensor fleets on real terrain: where gateways go, which kit each node needs, and proof that every sensor is heard with margin.'),
    h('h2', {}, 'Sign in'),
    h(
      'p',
      {},
      'Open the one-time sign-in link the server printed when it started (it looks like ',
      h('code', {}, '/signin?token=…'),
      '), or paste an API token or that link here.',
    ),
    field('API token or sign-in link', input, 'Issued with: npm run --silent earshot -- token issue --team <slug> --role planner --json'),
    h('button', { type: 'submit', class: 'primary' }, 'Sign in'),
    status,
  );
  form.addEventListener('submit', (event) => {
    event.preventDefault();
    void (async () => {
      status.replaceChildren();
      const raw = input.value.trim();
      if (!raw) {
        status.append(notice('error', 'Paste a token or a sign-in link first.'));
        return;
      }
      const linkMatch = /[?&]token=([^&#\s]+)/.exec(raw);
      if (linkMatch) {
        // A one-time link: let the server turn it into the sign-in cookie.
        location.href = `/signin?token=${linkMatch[1]}`;
        return;
      }
      storeToken(raw);
      try {
        const s = await refreshSession();
        if (!s.signedIn) {
          storeToken(null);
          status.append(notice('error', 'The server did not accept this token (it may be revoked, mistyped, or a one-time token already used).'));
          return;
        }
        await onSignedIn();
      } catch (err) {
        storeToken(null);
        const message = err instanceof ApiError ? `${err.message} (${err.code})` : errorText(err);
        status.append(notice('error', `Sign-in failed: ${message}`));
      }
    })();
  });
  main.append(form);
  input.focus();
}
