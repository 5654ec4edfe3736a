// Workbench entry point.
import './components/app';
