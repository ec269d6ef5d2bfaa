// Fills the privacy notice with this site's facts (name, retention) from GET /api/site.
import { api } from './api.js';
import { $ } from './dom.js';

try {
  const site = await api('/api/site');
  for (const el of document.querySelectorAll('[data-fill="site"]')) el.textContent = site.site;
  const days = site.sampleRetentionDays;
  $('#retention').textContent = days === null || days === undefined ? 'as configured (storage.sampleRetentionDays; 30 days unless changed)' : `${days} day${days === 1 ? '' : 's'}`;
} catch {
  $('#retention').textContent = 'as configured (storage.sampleRetentionDays; 30 days unless changed)';
}
