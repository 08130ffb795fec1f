// Hash routes: #/plans, #/plan/<id>[?node=<id>], #/plan/<id>/fleet,
// #/plan/<id>/summary, #/plan/<id>/install[/<nodeId>], #/plan/<id>/capacity, #/plan/<id>/siting,
// #/plan/<id>/compare[?with=<id>], #/signin, #/team (planners: people, invitations, audit log).

export interface Route {
  name: 'signin' | 'plans' | 'map' | 'fleet' | 'summary' | 'install' | 'capacity' | 'siting' | 'compare' | 'team';
  planId?: string;
  nodeId?: string;
  params: URLSearchParams;
}

export function parseRoute(hash: string): Route {
  const [path, query = ''] = hash.replace(/^#/, '').split('?');
  const params = new URLSearchParams(query);
  const parts = path.split('/').filter(Boolean);
  if (parts[0] === 'signin') return { name: 'signin', params };
  if (parts[0] === 'team') return { name: 'team', params };
  if (parts[0] === 'plan' && parts[1]) {
    const planId = decodeURIComponent(parts[1]);
    if (parts[2] === 'fleet') return { name: 'fleet', planId, params };
    if (parts[2] === 'summary') return { name: 'summary', planId, params };
    if (parts[2] === 'compare') return { name: 'compare', planId, params };
    if (parts[2] === 'capacity') return { name: 'capacity', planId, params };
    if (parts[2] === 'siting') return { name: 'siting', planId, params };
    if (parts[2] === 'install') return { name: 'install', planId, nodeId: parts[3] ? decodeURIComponent(parts[3]) : undefined, params };
    return { name: 'map', planId, nodeId: params.get('node') ?? undefined, params };
  }
  return { name: 'plans', params };
}

export const rerenderEvent = 'earshot:rerender';

/** Navigates; the same hash again re-renders the view. */
export function go(hash: string): void {
  if (location.hash === hash) window.dispatchEvent(new Event(rerenderEvent));
  else location.hash = hash;
}

export const planHash = (planId: string, rest = ''): string => `#/plan/${encodeURIComponent(planId)}${rest}`;
