//! A serde serializer that only walks a value and lists the paths of
//! non-finite floats (serde_json would write them as `null`, hiding them).

use serde::ser::{self, Serialize};
use std::fmt;

#[derive(Debug)]
pub struct Never;
impl fmt::Display for Never {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str("never")
    }
}
impl std::error::Error for Never {}
impl ser::Error for Never {
    fn custom<T: fmt::Display>(_: T) -> Self {
        Never
    }
}

/// Paths (dotted, indices as numbers) of every NaN or infinite float in `v`.
pub fn non_finite_paths<T: Serialize>(v: &T) -> Vec<String> {
    let mut w = Walker {
        path: Vec::new(),
        found: Vec::new(),
    };
    let _ = v.serialize(&mut w);
    w.found
}

pub struct Walker {
    path: Vec<String>,
    found: Vec<String>,
}

impl Walker {
    fn float(&mut self, x: f64) {
        if !x.is_finite() {
            self.found.push(format!("{} = {x}", self.path.join(".")));
        }
    }
}

pub struct Compound<'a> {
    w: &'a mut Walker,
    index: usize,
}

macro_rules! ok_scalars {
    ($($name:ident: $t:ty),*) => {
        $(fn $name(self, _v: $t) -> Result<(), Never> { Ok(()) })*
    };
}

impl<'a> ser::Serializer for &'a mut Walker {
    type Ok = ();
    type Error = Never;
    type SerializeSeq = Compound<'a>;
    type SerializeTuple = Compound<'a>;
    type SerializeTupleStruct = Compound<'a>;
    type SerializeTupleVariant = Compound<'a>;
    type SerializeMap = Compound<'a>;
    type SerializeStruct = Compound<'a>;
    type SerializeStructVariant = Compound<'a>;
    ok_scalars!(serialize_bool: bool, serialize_i8: i8, serialize_i16: i16, serialize_i32: i32,
        serialize_i64: i64, serialize_u8: u8, serialize_u16: u16, serialize_u32: u32,
        serialize_u64: u64, serialize_char: char, serialize_str: &str, serialize_bytes: &[u8]);
    fn serialize_f32(self, v: f32) -> Result<(), Never> {
        self.float(v as f64);
        Ok(())
    }
    fn serialize_f64(self, v: f64) -> Result<(), Never> {
        self.float(v);
        Ok(())
    }
    fn serialize_none(self) -> Result<(), Never> {
        Ok(())
    }
    fn serialize_some<T: ?Sized + Serialize>(self, v: &T) -> Result<(), Never> {
        v.serialize(self)
    }
    fn serialize_unit(self) -> Result<(), Never> {
        Ok(())
    }
    fn serialize_unit_struct(self, _: &'static str) -> Result<(), Never> {
        Ok(())
    }
    fn serialize_unit_variant(self, _: &'static str, _: u32, _: &'static str) -> Result<(), Never> {
        Ok(())
    }
    fn serialize_newtype_struct<T: ?Sized + Serialize>(
        self,
        _: &'static str,
        v: &T,
    ) -> Result<(), Never> {
        v.serialize(self)
    }
    fn serialize_newtype_variant<T: ?Sized + Serialize>(
        self,
        _: &'static str,
        _: u32,
        _: &'static str,
        v: &T,
    ) -> Result<(), Never> {
        v.serialize(self)
    }
    fn serialize_seq(self, _: Option<usize>) -> Result<Compound<'a>, Never> {
        Ok(Compound { w: self, index: 0 })
    }
    fn serialize_tuple(self, _: usize) -> Result<Compound<'a>, Never> {
        Ok(Compound { w: self, index: 0 })
    }
    fn serialize_tuple_struct(self, _: &'static str, _: usize) -> Result<Compound<'a>, Never> {
        Ok(Compound { w: self, index: 0 })
    }
    fn serialize_tuple_variant(
        self,
        _: &'static str,
        _: u32,
        _: &'static str,
        _: usize,
    ) -> Result<Compound<'a>, Never> {
        Ok(Compound { w: self, index: 0 })
    }
    fn serialize_map(self, _: Option<usize>) -> Result<Compound<'a>, Never> {
        Ok(Compound { w: self, index: 0 })
    }
    fn serialize_struct(self, _: &'static str, _: usize) -> Result<Compound<'a>, Never> {
        Ok(Compound { w: self, index: 0 })
    }
    fn serialize_struct_variant(
        self,
        _: &'static str,
        _: u32,
        _: &'static str,
        _: usize,
    ) -> Result<Compound<'a>, Never> {
        Ok(Compound { w: self, index: 0 })
    }
}

impl Compound<'_> {
    fn elem<T: ?Sized + Serialize>(&mut self, v: &T) -> Result<(), Never> {
        self.w.path.push(self.index.to_string());
        self.index += 1;
        let r = v.serialize(&mut *self.w);
        self.w.path.pop();
        r
    }
    fn field<T: ?Sized + Serialize>(&mut self, key: &str, v: &T) -> Result<(), Never> {
        self.w.path.push(key.to_string());
        let r = v.serialize(&mut *self.w);
        self.w.path.pop();
        r
    }
}

impl ser::SerializeSeq for Compound<'_> {
    type Ok = ();
    type Error = Never;
    fn serialize_element<T: ?Sized + Serialize>(&mut self, v: &T) -> Result<(), Never> {
        self.elem(v)
    }
    fn end(self) -> Result<(), Never> {
        Ok(())
    }
}
impl ser::SerializeTuple for Compound<'_> {
    type Ok = ();
    type Error = Never;
    fn serialize_element<T: ?Sized + Serialize>(&mut self, v: &T) -> Result<(), Never> {
        self.elem(v)
    }
    fn end(self) -> Result<(), Never> {
        Ok(())
    }
}
impl ser::SerializeTupleStruct for Compound<'_> {
    type Ok = ();
    type Error = Never;
    fn serialize_field<T: ?Sized + Serialize>(&mut self, v: &T) -> Result<(), Never> {
        self.elem(v)
    }
    fn end(self) -> Result<(), Never> {
        Ok(())
    }
}
impl ser::SerializeTupleVariant for Compound<'_> {
    type Ok = ();
    type Error = Never;
    fn serialize_field<T: ?Sized + Serialize>(&mut self, v: &T) -> Result<(), Never> {
        self.elem(v)
    }
    fn end(self) -> Result<(), Never> {
        Ok(())
    }
}
impl ser::SerializeMap for Compound<'_> {
    type Ok = ();
    type Error = Never;
    fn serialize_key<T: ?Sized + Serialize>(&mut self, _k: &T) -> Result<(), Never> {
        Ok(())
    }
    fn serialize_value<T: ?Sized + Serialize>(&mut self, v: &T) -> Result<(), Never> {
        self.elem(v)
    }
    fn end(self) -> Result<(), Never> {
        Ok(())
    }
}
impl ser::SerializeStruct for Compound<'_> {
    type Ok = ();
    type Error = Never;
    fn serialize_field<T: ?Sized + Serialize>(
        &mut self,
        key: &'static str,
        v: &T,
    ) -> Result<(), Never> {
        self.field(key, v)
    }
    fn end(self) -> Result<(), Never> {
        Ok(())
    }
}
impl ser::SerializeStructVariant for Compound<'_> {
    type Ok = ();
    type Error = Never;
    fn serialize_field<T: ?Sized + Serialize>(
        &mut self,
        key: &'static str,
        v: &T,
    ) -> Result<(), Never> {
        self.field(key, v)
    }
    fn end(self) -> Result<(), Never> {
        Ok(())
    }
}
