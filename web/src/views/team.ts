// Team page (planners): invite a teammate with a role (one-time sign-in link + QR code for a
// phone), see who holds which token, session or unused link and revoke it, and read the
// team's audit log with names and local times.
import { ApiError } from '../api.ts';
import { getAudit, getTeamAccess, inviteTeammate, revokeAccess, type AccessEntry, type AuditEntry, type Role, type TeamMember } from '../api-team.ts';
import { canEdit } from '../session.ts';
import { announce, clear, errorText, field, h, localTime, notice, select } from '../ui.ts';

const roleWords: Record<Role, string> = {
  planner: 'planner (edits plans, invites people)',
  installer: 'installer (visit sheets, readings, install status)',
  viewer: 'viewer (reads maps and reports)',
};
const kindWords: Record<AccessEntry['kind'], string> = {
  'api-token': 'API token',
  'browser-session': 'browser session',
  'sign-in-link': 'sign-in link, not used yet',
};
const actionWords: Record<string, string> = {
  create: 'created',
  update: 'changed',
  delete: 'deleted',
  issue: 'issued',
  revoke: 'revoked',
  invite: 'invited',
  signin: 'signed in',
  signout: 'signed out',
  import: 'imported',
};
const entityWords: Record<string, string> = {
  token: 'access',
  terrain_layer: 'terrain layer',
  coverage_run: 'coverage run',
  field_reading: 'field reading',
};

export async function renderTeam(main: HTMLElement): Promise<void> {
  main.append(h('h1', {}, 'Team'));
  if (!canEdit()) {
    main.append(notice('info', 'Only planners manage the team. Ask a planner for an invitation for a colleague.'));
    return;
  }
  const inviteBox = h('section', { class: 'card team-invite', 'aria-labelledby': 'invite-h' });
  const peopleBox = h('section', { class: 'card', 'aria-labelledby': 'people-h' }, h('h2', { id: 'people-h' }, 'People and access'));
  const auditBox = h('section', { class: 'card', 'aria-labelledby': 'audit-h' }, h('h2', { id: 'audit-h' }, 'Audit log'));
  main.append(h('div', { class: 'team-layout' }, inviteBox, peopleBox), auditBox);

  let members: TeamMember[] = [];
  const peopleBody = h('div', { id: 'team-people' });
  peopleBox.append(peopleBody);
  const auditBody = h('div', { id: 'team-audit' });
  auditBox.append(auditBody);

  async function refresh(): Promise<void> {
    try {
      members = await getTeamAccess();
      drawPeople();
    } catch (err) {
      peopleBody.replaceChildren(notice('error', `Could not load the team: ${errorText(err)}`));
    }
    try {
      drawAudit((await getAudit(100)).items);
    } catch (err) {
      auditBody.replaceChildren(notice('error', `Could not load the audit log: ${errorText(err)}`));
    }
  }

  // ---------- invite ----------
  const nameInput = h('input', { type: 'text', maxlength: '200', autocomplete: 'off', placeholder: 'e.g. Ana (field crew)' });
  const roleSelect = select((['installer', 'viewer', 'planner'] as Role[]).map((r) => ({ value: r, label: roleWords[r] })), 'installer');
  const daysInput = h('input', { type: 'number', min: '1', max: '30', step: '1', value: '7', inputmode: 'numeric' });
  const result = h('div', { id: 'invite-result', 'aria-live': 'polite' });
  const form = h(
    'form',
    { class: 'stack' },
    field('Name', nameInput, 'Shown in the audit log and on this page.'),
    field('Role', roleSelect),
    field('Link valid for (days)', daysInput, 'The link works once; the session it starts lasts 30 days or until revoked here.'),
    h('button', { type: 'submit', class: 'primary' }, 'Create sign-in link'),
  );
  inviteBox.append(h('h2', { id: 'invite-h' }, 'Invite a teammate'), form, result);
  form.addEventListener('submit', (event) => {
    event.preventDefault();
    const button = form.querySelector('button[type=submit]') as HTMLButtonElement;
    button.disabled = true;
    result.replaceChildren();
    const days = Number(daysInput.value);
    void inviteTeammate({ role: roleSelect.value as Role, userName: nameInput.value.trim() || undefined, expiresInDays: Number.isFinite(days) && days > 0 ? days : undefined })
      .then((invitation) => {
        const linkField = h('input', { type: 'text', readonly: true, value: invitation.link, id: 'invite-link', class: 'wide', spellcheck: 'false' });
        const copied = h('span', { class: 'muted small', 'aria-live': 'polite' });
        const qr = h('div', { class: 'qr', id: 'invite-qr', role: 'img', 'aria-label': `QR code of the sign-in link for ${invitation.userName}` });
        // The SVG is drawn by our own server (qrcode package) from the link text only.
        qr.innerHTML = invitation.qrSvg;
        result.replaceChildren(
          notice('ok', `Sign-in link for ${invitation.userName} (${invitation.role}). It works once and expires ${localTime(invitation.expiresAt)}. Hand it over privately: whoever opens it first is signed in as ${invitation.userName}.`),
          field('Sign-in link', linkField),
          h(
            'div',
            { class: 'button-row' },
            h(
              'button',
              {
                type: 'button',
                onclick: () => {
                  linkField.select();
                  void navigator.clipboard
                    ?.writeText(invitation.link)
                    .then(() => (copied.textContent = 'Copied.'))
                    .catch(() => (copied.textContent = 'Select the link and copy it.'));
                },
              },
              'Copy link',
            ),
            copied,
          ),
          h('p', { class: 'muted small' }, 'On a phone: scan this code with the camera.'),
          qr,
        );
        announce(`Sign-in link created for ${invitation.userName}`);
        void refresh();
      })
      .catch((err: unknown) => result.replaceChildren(notice('error', err instanceof ApiError ? err.message : errorText(err))))
      .finally(() => (button.disabled = false));
  });

  // ---------- people ----------
  function drawPeople(): void {
    clear(peopleBody);
    const table = h(
      'table',
      { class: 'data-table team-table' },
      h('thead', {}, h('tr', {}, h('th', { scope: 'col' }, 'Person'), h('th', { scope: 'col' }, 'Access'), h('th', { scope: 'col' }, 'Last used'), h('th', { scope: 'col' }, 'Ends'), h('th', { scope: 'col' }, h('span', { class: 'visually-hidden' }, 'Actions')))),
    );
    const body = h('tbody');
    for (const member of members) {
      const rows = member.access.length > 0 ? member.access : [null];
      rows.forEach((entry, i) => {
        const person = i === 0 ? h('td', { rowspan: String(rows.length) }, h('strong', {}, member.name), h('br'), h('span', { class: 'muted small' }, member.role)) : null;
        if (!entry) {
          body.append(h('tr', {}, person, h('td', { colspan: '4', class: 'muted' }, 'no live access')));
          return;
        }
        const revoke = h(
          'button',
          {
            type: 'button',
            class: 'small-button',
            'aria-label': `Revoke ${kindWords[entry.kind]} of ${member.name}`,
            onclick: () => {
              if (entry.current && !window.confirm('This is your own session: revoking it signs you out. Continue?')) return;
              revoke.setAttribute('disabled', '');
              void revokeAccess(entry.id)
                .then(() => {
                  announce(`Revoked ${kindWords[entry.kind]} of ${member.name}`);
                  if (entry.current) location.reload();
                  else void refresh();
                })
                .catch((err: unknown) => {
                  revoke.removeAttribute('disabled');
                  peopleBody.prepend(notice('error', errorText(err)));
                });
            },
          },
          'Revoke',
        );
        body.append(
          h(
            'tr',
            {},
            person,
            h('td', {}, kindWords[entry.kind], entry.current ? h('span', { class: 'muted small' }, ' (this browser)') : null, entry.label && entry.kind === 'api-token' ? h('span', { class: 'muted small' }, ` · ${entry.label}`) : null),
            h('td', {}, entry.lastUsedAt ? localTime(entry.lastUsedAt) : 'never'),
            h('td', {}, entry.expiresAt ? localTime(entry.expiresAt) : 'when revoked'),
            h('td', {}, revoke),
          ),
        );
      });
    }
    table.append(body);
    peopleBody.append(h('div', { class: 'table-scroll' }, table));
  }

  // ---------- audit ----------
  function drawAudit(entries: AuditEntry[]): void {
    const names = new Map(members.map((m) => [m.id, m.name]));
    clear(auditBody);
    if (entries.length === 0) {
      auditBody.append(h('p', { class: 'muted' }, 'Nothing recorded yet.'));
      return;
    }
    const describe = (entry: AuditEntry): string => {
      const detail = (entry.detail ?? {}) as Record<string, unknown>;
      // Sign-in, sign-out and invitations are about a person, not "a token".
      const what = entry.entity === 'token' && ['signin', 'signout', 'invite'].includes(entry.action) ? '' : (entityWords[entry.entity] ?? entry.entity.replace(/_/g, ' '));
      const label = typeof detail.name === 'string' ? ` “${detail.name}”` : '';
      const extra = typeof detail.role === 'string' ? ` (${detail.role})` : typeof detail.via === 'string' ? ` (via ${detail.via})` : '';
      return [actionWords[entry.action] ?? entry.action, what].filter(Boolean).join(' ') + `${label}${extra}`;
    };
    const table = h(
      'table',
      { class: 'data-table audit-table' },
      h('thead', {}, h('tr', {}, h('th', { scope: 'col' }, 'When'), h('th', { scope: 'col' }, 'Who'), h('th', { scope: 'col' }, 'What'))),
      h(
        'tbody',
        {},
        ...entries.map((entry) => h('tr', {}, h('td', {}, localTime(entry.at)), h('td', {}, entry.userId ? (names.get(entry.userId) ?? 'a former member') : 'server admin (CLI)'), h('td', {}, describe(entry)))),
      ),
    );
    auditBody.append(h('div', { class: 'table-scroll' }, table), h('p', { class: 'muted small' }, `The latest ${entries.length} entries, in your local time.`));
  }

  await refresh();
}
