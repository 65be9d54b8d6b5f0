//! PLACEHOLDER (helper replaces): TEOS-10 Gibbs function of seawater (IAPWS-09 water part, IAPWS-08 saline part).
