import { mount } from 'svelte';
import App from './app.svelte';
import './theme.css';

mount(App, { target: document.getElementById('app')! });
