//! `glasspoint user …` and `glasspoint audit verify`: account administration and the
//! audit-trail check on the server's console.

use std::io::{BufRead, IsTerminal};
use std::process::ExitCode;

use clap::Subcommand;

use crate::auth::secrets::{check_new_password, hash_password};
use crate::auth::Actor;
use crate::domain::{Role, TokenScope};
use crate::storage::NewUser;
use crate::{AppError, Store};

#[derive(Subcommand)]
pub enum UserCommand {
    /// Create an account; the password is asked twice (or read from standard input).
    Add {
        name: String,
        /// reader, scientist, reviewer or admin
        #[arg(long)]
        role: String,
        /// The name signatures show (default: NAME).
        #[arg(long)]
        full_name: Option<String>,
    },
    /// Set a new password (ends the account's sessions).
    Passwd { name: String },
    /// Disable an account: it can no longer sign in, and its sessions and tokens end.
    Disable { name: String },
    /// Enable a disabled account again.
    Enable { name: String },
    /// List the accounts.
    List,
    /// Issue an API token and print it once.
    Token {
        name: String,
        /// read or write
        #[arg(long)]
        scope: String,
        /// A label to recognise the token by.
        #[arg(long, default_value = "")]
        label: String,
    },
}

/// Changes made on the console are attributed to the operating-system account that ran
/// the command.
fn console_actor() -> Actor {
    let os_user = std::env::var("USER")
        .or_else(|_| std::env::var("USERNAME"))
        .unwrap_or_else(|_| "unknown".into());
    Actor {
        user_id: None,
        username: format!("console:{os_user}"),
        full_name: format!("Server console ({os_user})"),
        role: Role::Admin,
        can_write: true,
    }
}

/// A new password: prompted twice on a terminal; otherwise the first line of standard
/// input, and a second line, when there is one, must repeat it.
fn read_new_password() -> Result<String, AppError> {
    let password = if std::io::stdin().is_terminal() {
        let first = rpassword::prompt_password("New password: ")
            .map_err(|e| AppError::input("password", format!("cannot read it: {e}")))?;
        let second = rpassword::prompt_password("Repeat it: ")
            .map_err(|e| AppError::input("password", format!("cannot read it: {e}")))?;
        if first != second {
            return Err(AppError::input("password", "the two entries differ"));
        }
        first
    } else {
        let mut lines = std::io::stdin().lock().lines();
        let first = lines
            .next()
            .transpose()
            .map_err(|e| AppError::input("password", format!("cannot read standard input: {e}")))?
            .ok_or_else(|| AppError::input("password", "standard input is empty"))?;
        if let Some(Ok(second)) = lines.next() {
            if !second.is_empty() && second != first {
                return Err(AppError::input(
                    "password",
                    "the second line of standard input differs from the first",
                ));
            }
        }
        first
    };
    check_new_password(&password)?;
    Ok(password)
}

async fn find(store: &Store, name: &str) -> Result<crate::storage::User, AppError> {
    store
        .user_by_name(name)
        .await?
        .map(|(u, _)| u)
        .ok_or_else(|| AppError::input("NAME", format!("no account is called '{name}'")))
}

pub async fn run_user(store: &Store, command: UserCommand) -> Result<ExitCode, AppError> {
    let actor = console_actor();
    match command {
        UserCommand::Add {
            name,
            role,
            full_name,
        } => {
            let role = Role::parse(&role).ok_or_else(|| {
                AppError::input("--role", format!("must be one of: {}", Role::codes()))
            })?;
            crate::storage::check_username(&name)?;
            if store.user_by_name(&name).await?.is_some() {
                return Err(AppError::input(
                    "NAME",
                    "another account already uses this name",
                ));
            }
            let password = read_new_password()?;
            let full_name = full_name.unwrap_or_else(|| name.clone());
            store
                .create_user(
                    &actor,
                    &NewUser {
                        username: &name,
                        full_name: &full_name,
                        role,
                        password_hash: &hash_password(&password)?,
                    },
                )
                .await?;
            eprintln!(
                "glasspoint: account '{name}' created with the {} role",
                role.code()
            );
        }
        UserCommand::Passwd { name } => {
            let user = find(store, &name).await?;
            let password = read_new_password()?;
            store
                .set_password(&actor, user.id, &hash_password(&password)?)
                .await?;
            eprintln!("glasspoint: password of '{name}' changed; its sessions ended");
        }
        UserCommand::Disable { name } => {
            let user = find(store, &name).await?;
            store.set_disabled(&actor, user.id, true).await?;
            eprintln!("glasspoint: '{name}' disabled; its sessions and tokens ended");
        }
        UserCommand::Enable { name } => {
            let user = find(store, &name).await?;
            store.set_disabled(&actor, user.id, false).await?;
            eprintln!("glasspoint: '{name}' enabled");
        }
        UserCommand::List => {
            for u in store.list_users().await? {
                println!(
                    "{}\t{}\t{}\t{}",
                    u.username,
                    u.role.code(),
                    if u.disabled { "disabled" } else { "active" },
                    u.full_name
                );
            }
        }
        UserCommand::Token { name, scope, label } => {
            let scope = TokenScope::parse(&scope).ok_or_else(|| {
                AppError::input(
                    "--scope",
                    format!("must be one of: {}", TokenScope::codes()),
                )
            })?;
            let user = find(store, &name).await?;
            let token = store.create_token(&actor, user.id, scope, &label).await?;
            println!("{token}");
            eprintln!(
                "glasspoint: a {} token for '{name}'; it is shown this once. Send it as 'Authorization: Bearer …'.",
                scope.code()
            );
        }
    }
    Ok(ExitCode::SUCCESS)
}

/// Exit status 0 when the trail is intact, 1 when it is not.
pub async fn run_audit_verify(store: &Store) -> Result<ExitCode, AppError> {
    let check = store.verify_audit().await?;
    if check.intact {
        println!("intact: {}", check.message);
        Ok(ExitCode::SUCCESS)
    } else {
        println!("ALTERED: {}", check.message);
        Ok(ExitCode::FAILURE)
    }
}
