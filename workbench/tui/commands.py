"""Every action of the current screen in the command palette (ctrl+p), greyed-out ones left out."""
from __future__ import annotations

from typing import Iterator

from textual.actions import parse
from textual.binding import Binding
from textual.command import DiscoveryHit, Hit, Hits, Provider

from workbench.tui.keys import key_text


class WorkbenchCommands(Provider):
    """Commands from the bindings of the screen the palette was opened over, and of the app."""

    def _commands(self) -> Iterator[tuple[str, str, object]]:
        screen = self.screen
        seen = set()
        for target, bindings in ((screen, screen.BINDINGS), (self.app, self.app.BINDINGS)):
            for b in bindings:
                if not isinstance(b, Binding) or b.action in seen or b.system:
                    continue
                seen.add(b.action)
                _ns, name, params = parse(b.action)
                if target.check_action(name, params) is not True:
                    continue
                yield f"{b.description}", f"key {key_text(b.key)}", (target, b.action)

    def _runner(self, target, action: str):
        return lambda: self.app.call_later(target.run_action, action)

    async def discover(self) -> Hits:
        for words, help_, (target, action) in self._commands():
            yield DiscoveryHit(words, self._runner(target, action), help=help_)

    async def search(self, query: str) -> Hits:
        matcher = self.matcher(query)
        for words, help_, (target, action) in self._commands():
            score = matcher.match(words)
            if score > 0:
                yield Hit(score, matcher.highlight(words), self._runner(target, action), text=words, help=help_)
