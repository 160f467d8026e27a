//! Password hashing (argon2id), random secrets and their digests.

use argon2::password_hash::{
    rand_core::OsRng, PasswordHash, PasswordHasher, PasswordVerifier, SaltString,
};
use argon2::Argon2;
use rand::RngCore;
use sha2::{Digest, Sha256};

use crate::error::AppError;

/// Shortest password accepted (common practice, no source).
pub const MIN_PASSWORD_CHARS: usize = 10;
pub const MAX_PASSWORD_CHARS: usize = 1024;

/// Checks a new password's length; the message names the field.
pub fn check_new_password(password: &str) -> Result<(), AppError> {
    let n = password.chars().count();
    if n < MIN_PASSWORD_CHARS {
        return Err(AppError::input(
            "password",
            format!("must have at least {MIN_PASSWORD_CHARS} characters"),
        ));
    }
    if n > MAX_PASSWORD_CHARS {
        return Err(AppError::input(
            "password",
            format!("must have at most {MAX_PASSWORD_CHARS} characters"),
        ));
    }
    Ok(())
}

/// An argon2id hash in PHC string form, with a fresh random salt.
pub fn hash_password(password: &str) -> Result<String, AppError> {
    let salt = SaltString::generate(&mut OsRng);
    Argon2::default()
        .hash_password(password.as_bytes(), &salt)
        .map(|h| h.to_string())
        .map_err(|e| AppError::Internal(format!("password hashing: {e}")))
}

/// Whether `password` matches the stored hash; a malformed hash never matches.
pub fn verify_password(stored: &str, password: &str) -> bool {
    match PasswordHash::new(stored) {
        Ok(hash) => Argon2::default()
            .verify_password(password.as_bytes(), &hash)
            .is_ok(),
        Err(_) => false,
    }
}

/// Spends the time a real verification takes, so an unknown account name answers as
/// slowly as a wrong password.
pub fn verify_against_nothing(password: &str) {
    static DUMMY: std::sync::OnceLock<String> = std::sync::OnceLock::new();
    let hash = DUMMY.get_or_init(|| hash_password("not a password of anyone").unwrap_or_default());
    let _ = verify_password(hash, password);
}

/// `bytes` random bytes from the operating system, as hex.
pub fn random_hex(bytes: usize) -> String {
    let mut buf = vec![0u8; bytes];
    rand::rngs::OsRng.fill_bytes(&mut buf);
    hex::encode(buf)
}

pub fn sha256_hex(text: &str) -> String {
    hex::encode(Sha256::digest(text.as_bytes()))
}

/// Compares two secrets in time independent of where they differ.
pub fn same_secret(a: &str, b: &str) -> bool {
    let (a, b) = (a.as_bytes(), b.as_bytes());
    a.len() == b.len() && a.iter().zip(b).fold(0u8, |acc, (x, y)| acc | (x ^ y)) == 0
}

/// API tokens start with this, so they are recognisable in logs and secret scanners.
pub const TOKEN_PREFIX: &str = "gpt_";

pub fn new_api_token() -> String {
    format!("{TOKEN_PREFIX}{}", random_hex(32))
}
