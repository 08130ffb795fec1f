// Plan settings editor (planners): name, description, band plan, target margin,
// location variability σ and propagation method — the fields PATCH /plans/:id accepts.
// Only changed fields are sent, with the version the form was opened on; a stale
// version (409) closes the form and opens the conflict dialog (nothing overwritten).
import { ApiError, type ClientSettings } from '../api.ts';
import { explainWriteError, type PlanStore } from '../plan-store.ts';
import { announce, field, h, openDialog, select } from '../ui.ts';
import { applyRange, rangeProblem } from '../ranges.ts';

/** What each propagation method id means, in our words (ids from the server's list). */
export const methodLabels: Record<string, string> = {
  p1812: 'ITU-R P.1812 (path-specific, terrain and clutter)',
  bullington: 'Bullington diffraction over terrain',
  'knife-edge': 'single knife-edge diffraction',
  deygout: 'Deygout multiple knife-edge diffraction',
  'free-space': 'free space only (no terrain)',
};

export function openPlanSettingsDialog(store: PlanStore, settings: Pick<ClientSettings, 'bandPlans' | 'propagationMethods'>, onSaved: () => void): void {
  const plan = store.plan;
  const openedVersion = plan.version;
  openDialog('Plan settings', (body, close) => {
    const name = h('input', { name: 'name', type: 'text', required: true, maxlength: '200', id: 'plan-name' });
    name.value = plan.name;
    const description = h('textarea', { name: 'description', rows: '2', id: 'plan-description' });
    description.value = String(plan.description ?? '');
    const bandChoices = settings.bandPlans.length > 0 ? settings.bandPlans : [{ id: String(plan.bandPlanId ?? ''), name: String(plan.bandPlanId ?? '') }];
    const band = select(
      bandChoices.map((b) => ({ value: b.id, label: `${b.name} (${b.id})` })),
      plan.bandPlanId,
      { name: 'bandPlanId', id: 'plan-band' },
    );
    const margin = h('input', { name: 'targetMarginDb', type: 'number', min: '-20', max: '60', step: '0.5', required: true, id: 'plan-margin', inputmode: 'decimal' });
    applyRange(margin, 'targetMarginDb');
    margin.value = String(plan.targetMarginDb ?? 10);
    const sigma = h('input', { name: 'locationSigmaDb', type: 'number', min: '0', max: '30', step: '0.1', id: 'plan-sigma', inputmode: 'decimal', placeholder: 'P.1812 §4.8' });
    applyRange(sigma, 'sigmaDb');
    sigma.value = plan.locationSigmaDb === null || plan.locationSigmaDb === undefined ? '' : String(plan.locationSigmaDb);
    const modelSigma = h('input', { name: 'modelSigmaDb', type: 'number', min: '0', max: '30', step: '0.1', id: 'plan-model-sigma', inputmode: 'decimal', placeholder: 'default 6' });
    applyRange(modelSigma, 'sigmaDb');
    const planModelSigma = plan.modelSigmaDb === null || plan.modelSigmaDb === undefined ? null : Number(plan.modelSigmaDb);
    modelSigma.value = planModelSigma === null ? '' : String(planModelSigma);
    const methods = settings.propagationMethods.length > 0 ? settings.propagationMethods : [String(plan.propagationMethod ?? 'p1812')];
    const method = select(
      methods.map((m) => ({ value: m, label: methodLabels[m] ? `${methodLabels[m]} (${m})` : m })),
      plan.propagationMethod,
      { name: 'propagationMethod', id: 'plan-method' },
    );
    const status = h('p', { id: 'plan-settings-status', 'aria-live': 'polite' });
    const save = h('button', { type: 'submit', class: 'primary', id: 'plan-settings-save' }, 'Save plan settings');
    const form = h(
      'form',
      { class: 'edit-form', novalidate: true },
      field('Plan name', name),
      field('Description', description),
      field('Band plan', band, 'Sets the frequency, channel rules and transmit power limits'),
      field('Target margin (dB)', margin, 'A node counts as served at or above this margin (−20 to 60 dB)'),
      field('Location variability σL (dB)', sigma, 'Spread of the level over a small area; empty = ITU-R P.1812 §4.8 with its antenna-height factor (0 to 30 dB)'),
      field('Model error σM (dB)', modelSigma, 'How far the path model may miss in practice; empty = 6 dB. Probabilities use σ = √(σL² + σM²) until a calibration is applied (0 to 30 dB)'),
      field('Propagation method', method),
      h('div', { style: 'grid-column: 1 / -1' }, status, h('div', { class: 'dialog-actions' }, save, h('button', { type: 'button', onclick: close }, 'Cancel'))),
    );
    form.addEventListener('submit', (event) => {
      event.preventDefault();
      const changes: Record<string, unknown> = {};
      const problems: string[] = [];
      if (name.value.trim() === '') problems.push('Plan name: must not be empty.');
      else if (name.value.trim() !== plan.name) changes.name = name.value.trim();
      if (description.value !== String(plan.description ?? '')) changes.description = description.value;
      if (band.value !== plan.bandPlanId) changes.bandPlanId = band.value;
      const marginDb = Number(margin.value);
      const marginProblem = rangeProblem('Target margin (dB)', margin);
      if (marginProblem) problems.push(marginProblem);
      else if (marginDb !== plan.targetMarginDb) changes.targetMarginDb = marginDb;
      if (sigma.value.trim() === '') {
        if (plan.locationSigmaDb !== null && plan.locationSigmaDb !== undefined) changes.locationSigmaDb = null;
      } else {
        const sigmaDb = Number(sigma.value);
        const sigmaProblem = rangeProblem('Location variability σL (dB), or empty for the default', sigma);
        if (sigmaProblem) problems.push(sigmaProblem);
        else if (sigmaDb !== plan.locationSigmaDb) changes.locationSigmaDb = sigmaDb;
      }
      if (modelSigma.value.trim() === '') {
        if (planModelSigma !== null) changes.modelSigmaDb = null;
      } else {
        const modelSigmaDb = Number(modelSigma.value);
        const modelProblem = rangeProblem('Model error σM (dB), or empty for the default', modelSigma);
        if (modelProblem) problems.push(modelProblem);
        else if (modelSigmaDb !== planModelSigma) changes.modelSigmaDb = modelSigmaDb;
      }
      if (method.value !== plan.propagationMethod) changes.propagationMethod = method.value;
      if (problems.length > 0) {
        status.textContent = problems.join(' ');
        return;
      }
      if (Object.keys(changes).length === 0) {
        status.textContent = 'Nothing changed.';
        return;
      }
      save.disabled = true;
      status.textContent = 'Saving…';
      void store
        .updatePlan(changes, openedVersion)
        .then(() => {
          close();
          announce('Plan settings saved');
          onSaved();
        })
        .catch((err: unknown) => {
          save.disabled = false;
          const text = explainWriteError(err, store, 'the plan settings');
          // A version conflict has its own dialog (with reload): the stale form closes.
          if (err instanceof ApiError && err.status === 409) close();
          else status.textContent = text;
        });
    });
    body.append(
      h('p', { class: 'muted small' }, 'These settings apply to every link prediction and coverage run of the plan; node statuses are recomputed after saving.'),
      form,
    );
  });
}
