import { api, el, frame } from './common.js';

const form = document.getElementById('password-form');
const error = document.getElementById('password-error');
const done = document.getElementById('password-done');
const fields = {
  current: document.getElementById('current-password'),
  next: document.getElementById('new-password'),
  repeat: document.getElementById('repeat-password'),
};

/** The field each refusal is about (stable problem codes, never the text). */
const FIELD_OF = {
  API_BAD_CURRENT_PASSWORD: 'current',
  API_PASSWORD_TOO_SHORT: 'next',
  API_PASSWORD_UNCHANGED: 'next',
};

function refuse(field, message) {
  error.textContent = message;
  if (field !== undefined) {
    fields[field].setAttribute('aria-invalid', 'true');
    fields[field].focus();
  }
  form.dataset.state = 'refused';
}

form.addEventListener('submit', async (event) => {
  event.preventDefault();
  delete form.dataset.state;
  error.textContent = '';
  done.textContent = '';
  for (const input of Object.values(fields)) input.removeAttribute('aria-invalid');
  if (fields.current.value === '') return refuse('current', 'Type your current password first.');
  if (fields.next.value !== fields.repeat.value)
    return refuse('repeat', 'The two new passwords differ; type the same new password in both fields.');
  const button = form.querySelector('button[type=submit]');
  button.disabled = true;
  try {
    const r = await api('/api/auth/password', {
      method: 'POST',
      body: { currentPassword: fields.current.value, newPassword: fields.next.value },
    });
    form.reset();
    const n = r.sessionsEnded;
    done.textContent = `Password changed. ${n === 0 ? 'No other browser session was open' : `${n} other browser session${n === 1 ? ' was' : 's were'} signed out`}; this one stays signed in.`;
    form.dataset.state = 'changed';
  } catch (e) {
    refuse(FIELD_OF[e.code], e.message);
  } finally {
    button.disabled = false;
  }
});

const me = await frame();
const who = document.getElementById('account-who');
const none = document.getElementById('no-password');
if (me?.kind === 'user') {
  who.textContent = `Signed in as ${me.username}, role ${me.role}.`;
  form.hidden = false;
} else {
  // Local access without signing in: there is no own password to change.
  who.textContent = me === undefined ? '' : `Local access without signing in (role ${me.role}).`;
  none.append(
    'There is no password to change here. ',
    el('a', { href: '/login.html?next=/account.html', text: 'Sign in' }),
    ' to change yours.',
  );
  none.hidden = false;
}
document.getElementById('account').dataset.loaded = 'true';
