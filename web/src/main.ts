// earshot front end: a hash router over a few views. Hash routes keep the
// server side trivial (web/dist served as static files at /).
import { loadFieldRanges } from './ranges.ts';
import 'leaflet/dist/leaflet.css';
import './styles.css';
import './styles-field.css';
import { signOut } from './api-team.ts';
import { adoptStatusWords } from './status-words.ts';
import { refreshSession, role, session } from './session.ts';
import { clear, errorText, h, notice } from './ui.ts';
import { go, parseRoute, rerenderEvent, type Route } from './router.ts';
import { renderSignIn } from './views/signin.ts';
import { renderPlans } from './views/plans.ts';
import { renderMap } from './views/map.ts';
import { renderFleet } from './views/fleet.ts';
import { renderSummary } from './views/summary.ts';
import { renderInstaller } from './views/installer.ts';
import { renderCompare } from './views/compare-view.ts';
import { renderTeam } from './views/team.ts';
import { renderCapacity } from './views/capacity-panel.ts';
import { clearDevice, startOffline } from './offline/device.ts';
import { renderSiting } from './views/siting-panel.ts';

/** Each view returns an optional clean-up (stop polling, remove the map). */
type Cleanup = (() => void) | void;
let cleanup: Cleanup;

function shell(route: Route): HTMLElement {
  const planId = route.planId;
  const link = (href: string, label: string, active: boolean): HTMLElement =>
    h('a', { href, class: active ? 'nav-link active' : 'nav-link', 'aria-current': active ? 'page' : null }, label);
  const nav = h('nav', { 'aria-label': 'Main' }, link('#/plans', 'Plans', route.name === 'plans'));
  if (role() === 'planner') nav.append(link('#/team', 'Team', route.name === 'team'));
  if (planId) {
    const p = encodeURIComponent(planId);
    nav.append(
      link(`#/plan/${p}`, 'Map', route.name === 'map'),
      link(`#/plan/${p}/fleet`, 'Fleet table', route.name === 'fleet'),
      link(`#/plan/${p}/summary`, 'Summary', route.name === 'summary'),
      link(`#/plan/${p}/capacity`, 'Network load', route.name === 'capacity'),
      link(`#/plan/${p}/siting`, 'Gateway siting', route.name === 'siting'),
      link(`#/plan/${p}/install`, 'Installer', route.name === 'install'),
      link(`#/plan/${p}/compare`, 'Compare', route.name === 'compare'),
    );
  }
  const who = session.me ? `${session.me.user.name} · ${session.me.team.name} · ${role()}` : 'signed in';
  return h(
    'header',
    { class: 'topbar' },
    h('a', { href: '#/plans', class: 'brand', 'aria-label': 'earshot, plan list' }, h('span', { class: 'brand-mark', 'aria-hidden': 'true' }, '◠'), h('span', { class: 'brand-text' }, 'earshot')),
    nav,
    h(
      'div',
      { class: 'who' },
      h('span', { class: 'role-badge', title: who }, who),
      h(
        'button',
        {
          type: 'button',
          class: 'link-button',
          onclick: (event: Event) => {
            const button = event.currentTarget as HTMLButtonElement;
            button.disabled = true;
            // Ends the session on the server: a reload afterwards shows the sign-in page.
            // What this device kept for offline visits belongs to the one signed in: it goes too.
            void Promise.allSettled([signOut(), clearDevice()])
              .finally(() => {
                session.signedIn = false;
                session.me = null;
                go('#/signin');
              });
          },
        },
        'Sign out',
      ),
    ),
  );
}

async function render(): Promise<void> {
  if (typeof cleanup === 'function') cleanup();
  cleanup = undefined;
  const app = document.getElementById('app');
  if (!app) return;
  const route = parseRoute(location.hash);
  clear(app);
  if (!session.signedIn || route.name === 'signin') {
    const main = h('main', { id: 'main', class: 'signin-main', tabindex: '-1' });
    app.append(main);
    renderSignIn(main, async () => {
      await refreshSession();
      await adoptStatusWords();
      go('#/plans');
    });
    return;
  }
  // Every form reads the server's field ranges (GET /client-settings) before it is drawn.
  await loadFieldRanges();
  const main = h('main', { id: 'main', tabindex: '-1', class: `view-${route.name}` });
  app.append(shell(route), main);
  try {
    switch (route.name) {
      case 'plans':
        cleanup = await renderPlans(main);
        break;
      case 'map':
        cleanup = await renderMap(main, route);
        break;
      case 'fleet':
        cleanup = await renderFleet(main, route);
        break;
      case 'summary':
        cleanup = await renderSummary(main, route);
        break;
      case 'install':
        cleanup = await renderInstaller(main, route);
        break;
      case 'compare':
        cleanup = await renderCompare(main, route);
        break;
      case 'team':
        cleanup = await renderTeam(main);
        break;
      case 'capacity':
        cleanup = await renderCapacity(main, route);
        break;
      case 'siting':
        cleanup = await renderSiting(main, route);
        break;
    }
  } catch (err) {
    main.append(notice('error', `This view could not load: ${errorText(err)}`));
  }
}

async function start(): Promise<void> {
  startOffline();
  try {
    await refreshSession();
  } catch (err) {
    const app = document.getElementById('app');
    app?.append(notice('error', `The earshot server did not answer: ${errorText(err)}`));
    return;
  }
  // The status words are defined once on the server (server/planning/status.ts); the map
  // legend, panels and tables take them from there.
  if (session.signedIn) await adoptStatusWords();
  window.addEventListener('hashchange', () => void render());
  window.addEventListener(rerenderEvent, () => void render());
  await render();
}

void start();
