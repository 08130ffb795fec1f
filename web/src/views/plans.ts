// Plan list: every plan of the signed-in team, and a form to start a new one.
import { createPlan, getClientSettings, listPlans, type Plan } from '../api.ts';
import { go, planHash } from '../router.ts';
import { canEdit } from '../session.ts';
import { errorText, field, h, notice } from '../ui.ts';

export async function renderPlans(main: HTMLElement): Promise<void> {
  main.append(h('h1', {}, 'Plans'));
  const listBox = h('div', { class: 'plan-grid' });
  main.append(listBox);
  let plans: Plan[];
  // Band plan labels (the plan row holds the id); without them the id is shown.
  const bandPlans = getClientSettings()
    .then((settings) => settings.bandPlans)
    .catch(() => []);
  try {
    plans = await listPlans();
  } catch (err) {
    main.append(notice('error', `Could not load the plans: ${errorText(err)}`));
    return;
  }
  if (plans.length === 0) listBox.append(h('p', {}, 'No plans yet.'));
  for (const plan of plans) {
    const band = (await bandPlans).find((entry) => entry.id === plan.bandPlanId)?.name ?? plan.bandPlanId;
    const bits = [band, `target margin ${plan.targetMarginDb} dB`];
    listBox.append(
      h(
        'article',
        { class: 'card plan-card' },
        h('h2', {}, h('a', { href: planHash(plan.id), class: 'plan-link' }, plan.name)),
        plan.description ? h('p', {}, String(plan.description)) : null,
        h('p', { class: 'muted plan-band' }, bits.join(' · ')),
        h(
          'p',
          { class: 'plan-actions' },
          h('a', { href: planHash(plan.id) }, 'Map'),
          ' · ',
          h('a', { href: planHash(plan.id, '/fleet') }, 'Fleet table'),
          ' · ',
          h('a', { href: planHash(plan.id, '/summary') }, 'Summary'),
          ' · ',
          h('a', { href: planHash(plan.id, '/install') }, 'Installer'),
        ),
      ),
    );
  }
  if (canEdit()) {
    const name = h('input', { type: 'text', required: true, maxlength: '200' });
    const status = h('div', { 'aria-live': 'polite' });
    const form = h('form', { class: 'card inline-form' }, h('h2', {}, 'New plan'), field('Plan name', name), h('button', { type: 'submit' }, 'Create plan'), status);
    form.addEventListener('submit', (event) => {
      event.preventDefault();
      void createPlan(name.value.trim())
        .then((plan) => go(planHash(plan.id)))
        .catch((err: unknown) => status.replaceChildren(notice('error', errorText(err))));
    });
    main.append(form);
  }
}
