// Entry of the window: pick the client (Electron bridge or browser host), then mount the app.
import { mount } from 'svelte';
import App from './App.svelte';
import { makeClient } from './lib/client.ts';
import { app } from './lib/store.svelte.ts';
import './styles.css';

app.client = makeClient();
const target = document.getElementById('app');
if (!target) throw new Error('index.html has no #app element');
mount(App, { target });
