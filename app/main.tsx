import { createRoot } from "react-dom/client";
import { App } from "./App.js";
import "./styles.css";

// No StrictMode: its doubled development renders would distort the long-task figures the browser tests record.
createRoot(document.getElementById("root")!).render(<App />);
