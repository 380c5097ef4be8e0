import { api } from './common.js';

document.getElementById('login').addEventListener('submit', async (event) => {
  event.preventDefault();
  const error = document.getElementById('login-error');
  error.textContent = '';
  try {
    await api('/api/auth/login', {
      method: 'POST',
      body: {
        username: document.getElementById('username').value,
        password: document.getElementById('password').value,
      },
    });
    const next = new URLSearchParams(location.search).get('next');
    // Only a path on this site, never another origin.
    location.href = next?.startsWith('/') && !next.startsWith('//') ? next : '/';
  } catch (e) {
    error.textContent = e.message;
  }
});
