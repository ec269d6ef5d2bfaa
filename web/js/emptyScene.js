// The "Empty scene" panel of Zones: the learned empty scene's quality in plain words (technical
// figures one click away), learning it again, and going back to one of the kept ones.
import { api, explain } from './api.js';
import { $, h, replace } from './dom.js';
import { dateTime, percent, verdictWords } from './format.js';

/**
 * `camera()` gives the camera shown; `onModelChanged()` runs after the model in use changed (the
 * zone picture reloads its background).
 */
export function createEmptyScenePanel(app, { camera: current, onModelChanged }) {
  let learnTimer;
  /** Stored id of the empty scene the camera counts with, when known. */
  let inUse;

  async function loadModel() {
    const camera = current();
    if (!camera) return;
    let info;
    try {
      info = await api(`/api/cameras/${encodeURIComponent(camera.id)}/learn`);
    } catch (e) {
      $('#learn-error').textContent = explain(e);
      return;
    }
    const m = info.model;
    const figures = $('#model-figures');
    $('#model-technical').hidden = !m;
    if (!m) {
      replace(figures, h('dt', {}, 'Empty scene'), h('dd', {}, 'not learned yet'));
      replace($('#model-findings'));
    } else {
      replace(
        figures,
        h('dt', {}, 'Quality'),
        h('dd', {}, h('span', { class: 'verdict', dataset: { level: m.verdict.level } }, verdictWords[m.verdict.level] ?? m.verdict.level)),
        h('dt', {}, 'Learned from'),
        h('dd', {}, `${m.frames} pictures`),
      );
      // The statistics behind the verdict, for whoever wants them (PCA terms, grey levels 0..255).
      replace(
        $('#model-technical-figures'),
        h('dt', {}, 'Working size'),
        h('dd', {}, `${m.width}×${m.height} pixels`),
        h('dt', {}, 'Eigen-images kept (PCA components)'),
        h('dd', {}, String(m.components)),
        h('dt', {}, 'Variation explained'),
        h('dd', {}, percent(m.retainedVariance, 1)),
        h('dt', {}, 'Residual noise'),
        h('dd', {}, `${m.verdict.medianNoise.toFixed(1)} grey levels (median; 95th percentile ${m.verdict.noiseP95.toFixed(1)})`),
      );
      replace($('#model-findings'), m.verdict.findings.map((f) => h('li', {}, f)));
    }
    inUse = m?.id;
    showLearn(info.status);
  }

  function showLearn(status) {
    const bar = $('#learn-progress');
    const learning = status?.state === 'learning';
    bar.hidden = !learning;
    bar.firstElementChild.style.width = `${Math.round((status?.progress ?? 0) * 100)}%`;
    $('#learn-start').disabled = learning;
    $('#learn-start').textContent = !learning ? 'Learn again' : status.progress >= 0.98 ? 'Fitting the model…' : `Learning… ${Math.round(status.progress * 100)} %`;
    if (status?.state === 'failed') $('#learn-error').textContent = `Learning failed: ${status.error}`;
    showLearnNote(status);
    if (learning && !learnTimer) learnTimer = setInterval(pollLearn, 1000);
    if (!learning && learnTimer) {
      clearInterval(learnTimer);
      learnTimer = undefined;
    }
  }

  async function pollLearn() {
    const camera = current();
    if (!camera) return;
    try {
      const info = await api(`/api/cameras/${encodeURIComponent(camera.id)}/learn`);
      const was = learnTimer !== undefined;
      showLearn(info.status);
      if (was && info.status?.state !== 'learning') {
        await loadModel();
        await onModelChanged();
        await loadKept();
      }
    } catch {
      // the next poll tries again
    }
  }

  async function startLearning(event) {
    event.preventDefault();
    $('#learn-error').textContent = '';
    const camera = current();
    if (!camera) return;
    const seconds = Number($('#learn-seconds').value);
    try {
      const { status } = await api(`/api/cameras/${encodeURIComponent(camera.id)}/learn`, { method: 'POST', body: { seconds } });
      showLearn(status);
    } catch (e) {
      $('#learn-error').textContent = explain(e);
    }
  }

  /** What came of the last learning, in plain words: in use, in use although poor, or not used and why. */
  function showLearnNote(status) {
    const note = $('#learn-note');
    const when = status?.finishedAt ? dateTime(status.finishedAt, app.site.timeZone) : '';
    let text = '';
    let tone = 'done';
    if (status?.state === 'rejected' && status.modelId !== undefined && status.modelId === inUse) {
      text = `The empty scene learned ${when} was not used at first, as it turned out poor (${status.reason ?? 'no reason given'}). It has since been chosen from the kept ones and is in use.`;
      tone = 'poor';
    } else if (status?.state === 'rejected') {
      text = `The empty scene learned ${when} was not used: ${status.reason ?? 'it turned out poor'}. The camera kept counting with the empty scene it had.`;
      tone = 'rejected';
    } else if (status?.state === 'done' && status.verdict?.level === 'poor') {
      text = `The empty scene learned ${when} is in use, but it is poor: ${status.reason}. It was used because the camera had none; learn again when the view is empty.`;
      tone = 'poor';
    } else if (status?.state === 'done' && status.verdict) {
      text = `The empty scene learned ${when} is in use (${verdictWords[status.verdict.level].toLowerCase()}).`;
    }
    note.textContent = text;
    note.dataset.tone = tone;
    note.hidden = text === '';
  }

  // ---- kept empty scenes (going back to one) ----------------------------------------------

  async function loadKept() {
    const camera = current();
    if (!camera) return;
    const list = $('#kept-list');
    const hint = $('#kept-hint');
    $('#kept-error').textContent = '';
    if (!app.isAdmin()) {
      replace(list);
      hint.textContent = 'The last few empty scenes learned are kept. Enter the admin key to see them and go back to one.';
      return;
    }
    let models;
    try {
      models = (await api(`/api/cameras/${encodeURIComponent(camera.id)}/models`)).models;
    } catch (e) {
      $('#kept-error').textContent = explain(e);
      return;
    }
    hint.textContent = models.length === 0
      ? 'None yet.'
      : 'Newest first. If counting got worse after learning again, go back to one that worked.';
    const tz = app.site.timeZone;
    replace(
      list,
      models.map((m) => {
        const when = dateTime(m.learnedAt, tz);
        const words = verdictWords[m.verdict.level] ?? m.verdict.level;
        return h(
          'li',
          { class: 'kept', dataset: { model: m.id, active: m.active, level: m.verdict.level } },
          h(
            'div',
            { class: 'kept-head' },
            h('span', { class: 'kept-when' }, when),
            m.active ? h('span', { class: 'kept-badge' }, 'In use') : null,
            m.rejected ? h('span', { class: 'kept-badge rejected' }, 'Not used when learned') : null,
          ),
          h('p', { class: 'kept-verdict' }, h('span', { class: 'verdict', dataset: { level: m.verdict.level } }, words), ` — ${m.verdict.findings[0] ?? ''}`),
          m.active
            ? null
            : h('button', { type: 'button', class: 'quiet kept-use', 'aria-label': `Use the empty scene learned ${when}`, onclick: () => useKept(m, when) }, 'Use this one'),
        );
      }),
    );
  }

  async function useKept(m, when) {
    const camera = current();
    if (!camera) return;
    $('#kept-error').textContent = '';
    $('#kept-ok').textContent = '';
    if (m.verdict.level === 'poor' && !window.confirm(`This empty scene was judged poor: ${m.verdict.findings[0] ?? ''}. Counting may be wrong with it. Use it anyway?`)) return;
    try {
      await api(`/api/cameras/${encodeURIComponent(camera.id)}/models/${encodeURIComponent(m.id)}/activate`, { method: 'POST' });
    } catch (e) {
      $('#kept-error').textContent = explain(e);
      return;
    }
    $('#kept-ok').textContent = `Counting now uses the empty scene learned ${when}.`;
    await loadKept();
    await loadModel();
    await onModelChanged();
    $('#kept-list .kept[data-active="true"]')?.setAttribute('tabindex', '-1');
    $('#kept-list .kept[data-active="true"]')?.focus();
  }

  $('#learn-form').addEventListener('submit', startLearning);

  return {
    loadModel,
    loadKept,
    /** Forgets what was shown for the previous camera. */
    reset() {
      inUse = undefined;
    },
    stop() {
      clearInterval(learnTimer);
      learnTimer = undefined;
    },
  };
}
