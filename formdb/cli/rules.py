"""``formdb rules [--profile NAME] [CODE]``: the checker's rules, documented, with their state."""

from __future__ import annotations

import click


@click.command("rules")
@click.option("--profile", "profile_name", default="default", show_default=True,
              help="Profile whose state and option values to show (a name or a TOML path).")
@click.option("--brief", is_flag=True, help="One line per rule instead of its documentation.")
@click.argument("code", required=False)
def rules_cmd(profile_name: str, brief: bool, code: str | None) -> None:
    """List the rules of the formula checker with their documentation and their state in a
    profile (on or off, severity, option values). Give a CODE (e.g. HLB01) for one rule."""
    from formdb.rules.docs import describe_rules, state_text
    from formdb.rules.profiles import load_profile

    profile = load_profile(profile_name)
    states = describe_rules(profile, code)
    click.echo(f"Profile {profile.name} (version {profile.version}): {profile.description}")
    for state in states:
        click.echo("")
        click.echo(state_text(state, brief=brief))
